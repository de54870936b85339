"""Instrument sessions: mapping profiles, reference values, Sr curves, result kinds, blank deltas.

Revision ID: 0004_instrument
Revises: 0003_materials_residuals
Create Date: 2026-12-02 01:36:21.910566
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op


revision: str = "0004_instrument"
down_revision: str | None = "0003_materials_residuals"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "mapping_profile",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=120), nullable=False),
        sa.Column("definition", sa.JSON(), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_mapping_profile")),
        sa.UniqueConstraint("name", name=op.f("uq_mapping_profile_name")),
    )
    op.create_table(
        "sr_curve",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=120), nullable=False),
        sa.Column("points", sa.JSON(), nullable=False),
        sa.Column("source_sha256", sa.String(length=64), nullable=False),
        sa.Column("note", sa.String(length=500), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_sr_curve")),
        sa.UniqueConstraint("name", name=op.f("uq_sr_curve_name")),
    )
    op.create_table(
        "reference_value",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("reference_material_id", sa.Integer(), nullable=False),
        sa.Column("ratio", sa.String(length=20), nullable=False),
        sa.Column("scale", sa.String(length=120), nullable=False),
        sa.Column("kind", sa.String(length=10), nullable=False),
        sa.Column("value", sa.Double(), nullable=False),
        sa.Column("two_sd", sa.Double(), nullable=False),
        sa.Column("source", sa.String(length=500), nullable=False),
        sa.Column("recorded_by", sa.String(length=32), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["recorded_by"], ["operator.code"], name=op.f("fk_reference_value_recorded_by_operator")
        ),
        sa.ForeignKeyConstraint(
            ["reference_material_id"],
            ["reference_material.id"],
            name=op.f("fk_reference_value_reference_material_id_reference_material"),
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_reference_value")),
    )
    with op.batch_alter_table("reference_value", schema=None) as batch_op:
        batch_op.create_index(
            batch_op.f("ix_reference_value_reference_material_id"),
            ["reference_material_id"],
            unique=False,
        )

    with op.batch_alter_table("column_batch", schema=None) as batch_op:
        batch_op.add_column(
            sa.Column("blank_deltas", sa.JSON(), nullable=False, server_default="{}")
        )

    with op.batch_alter_table("instrument_session", schema=None) as batch_op:
        batch_op.add_column(
            sa.Column("mode", sa.String(length=10), nullable=False, server_default="delta")
        )
        batch_op.add_column(
            sa.Column("ratio_names", sa.JSON(), nullable=False, server_default="[]")
        )
        batch_op.add_column(
            sa.Column("standard_values", sa.JSON(), nullable=False, server_default="{}")
        )

    with op.batch_alter_table("loan", schema=None) as batch_op:
        batch_op.add_column(sa.Column("sr_curve_id", sa.Integer(), nullable=True))
        batch_op.create_foreign_key(
            batch_op.f("fk_loan_sr_curve_id_sr_curve"), "sr_curve", ["sr_curve_id"], ["id"]
        )

    with op.batch_alter_table("measurement", schema=None) as batch_op:
        batch_op.add_column(sa.Column("position_id", sa.Integer(), nullable=True))
        batch_op.create_foreign_key(
            batch_op.f("fk_measurement_position_id_batch_position"),
            "batch_position",
            ["position_id"],
            ["id"],
        )

    with op.batch_alter_table("result", schema=None) as batch_op:
        batch_op.add_column(sa.Column("position_id", sa.Integer(), nullable=True))
        batch_op.add_column(
            sa.Column("kind", sa.String(length=10), nullable=False, server_default="delta")
        )
        batch_op.add_column(
            sa.Column("blank_corrected", sa.Boolean(), nullable=False, server_default=sa.false())
        )
        batch_op.create_foreign_key(
            batch_op.f("fk_result_position_id_batch_position"),
            "batch_position",
            ["position_id"],
            ["id"],
        )


def downgrade() -> None:
    with op.batch_alter_table("result", schema=None) as batch_op:
        batch_op.drop_constraint(
            batch_op.f("fk_result_position_id_batch_position"), type_="foreignkey"
        )
        batch_op.drop_column("blank_corrected")
        batch_op.drop_column("kind")
        batch_op.drop_column("position_id")

    with op.batch_alter_table("measurement", schema=None) as batch_op:
        batch_op.drop_constraint(
            batch_op.f("fk_measurement_position_id_batch_position"), type_="foreignkey"
        )
        batch_op.drop_column("position_id")

    with op.batch_alter_table("loan", schema=None) as batch_op:
        batch_op.drop_constraint(batch_op.f("fk_loan_sr_curve_id_sr_curve"), type_="foreignkey")
        batch_op.drop_column("sr_curve_id")

    with op.batch_alter_table("instrument_session", schema=None) as batch_op:
        batch_op.drop_column("standard_values")
        batch_op.drop_column("ratio_names")
        batch_op.drop_column("mode")

    with op.batch_alter_table("column_batch", schema=None) as batch_op:
        batch_op.drop_column("blank_deltas")

    with op.batch_alter_table("reference_value", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_reference_value_reference_material_id"))

    op.drop_table("reference_value")
    op.drop_table("sr_curve")
    op.drop_table("mapping_profile")
