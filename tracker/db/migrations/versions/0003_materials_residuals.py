"""User materials (formula or measured range), powder material, residual weighings at disposal.

Revision ID: 0003_materials_residuals
Revises: 0002_append_only_ledger
Create Date: 2026-12-02 01:16:11.558822
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op


revision: str = "0003_materials_residuals"
down_revision: str | None = "0002_append_only_ledger"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "user_material",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=120), nullable=False),
        sa.Column("formula", sa.String(length=200), nullable=True),
        sa.Column("element", sa.String(length=3), nullable=True),
        sa.Column("fraction_low", sa.Double(), nullable=True),
        sa.Column("fraction_high", sa.Double(), nullable=True),
        sa.Column("notes", sa.Text(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_user_material")),
        sa.UniqueConstraint("name", name=op.f("uq_user_material_name")),
    )
    with op.batch_alter_table("powder", schema=None) as batch_op:
        batch_op.add_column(sa.Column("material", sa.String(length=120), nullable=True))
        batch_op.add_column(sa.Column("residual_mg", sa.Double(), nullable=True))
        batch_op.add_column(sa.Column("residual_u_mg", sa.Double(), nullable=True))

    with op.batch_alter_table("solution", schema=None) as batch_op:
        batch_op.add_column(sa.Column("residual_g", sa.Double(), nullable=True))
        batch_op.add_column(sa.Column("residual_u_g", sa.Double(), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("solution", schema=None) as batch_op:
        batch_op.drop_column("residual_u_g")
        batch_op.drop_column("residual_g")

    with op.batch_alter_table("powder", schema=None) as batch_op:
        batch_op.drop_column("residual_u_mg")
        batch_op.drop_column("residual_mg")
        batch_op.drop_column("material")

    op.drop_table("user_material")
