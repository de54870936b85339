"""Return reports: event references, specimen photos, manifest mappings, return shipments.

Revision ID: 0006_reports
Revises: 0005_labels
Create Date: 2026-12-02 02:06:14.795925
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op


revision: str = "0006_reports"
down_revision: str | None = "0005_labels"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "event_ref",
        sa.Column("seq", sa.Integer(), nullable=False),
        sa.Column("ref", sa.String(length=40), nullable=False),
        sa.ForeignKeyConstraint(
            ["seq"], ["custody_event.seq"], name=op.f("fk_event_ref_seq_custody_event")
        ),
        sa.PrimaryKeyConstraint("seq", "ref", name=op.f("pk_event_ref")),
    )
    with op.batch_alter_table("event_ref", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_event_ref_ref"), ["ref"], unique=False)

    op.create_table(
        "specimen_photo",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("specimen_id", sa.Integer(), nullable=False),
        sa.Column("document_id", sa.Integer(), nullable=False),
        sa.Column("stage", sa.String(length=20), nullable=False),
        sa.Column("caption", sa.String(length=300), nullable=True),
        sa.Column("taken_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["document_id"], ["document.id"], name=op.f("fk_specimen_photo_document_id_document")
        ),
        sa.ForeignKeyConstraint(
            ["specimen_id"], ["specimen.id"], name=op.f("fk_specimen_photo_specimen_id_specimen")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_specimen_photo")),
        sa.UniqueConstraint(
            "specimen_id", "document_id", name=op.f("uq_specimen_photo_specimen_id_document_id")
        ),
    )
    with op.batch_alter_table("specimen_photo", schema=None) as batch_op:
        batch_op.create_index(
            batch_op.f("ix_specimen_photo_specimen_id"), ["specimen_id"], unique=False
        )

    with op.batch_alter_table("mapping_profile", schema=None) as batch_op:
        batch_op.add_column(
            sa.Column("kind", sa.String(length=20), nullable=False, server_default="instrument")
        )

    with op.batch_alter_table("powder", schema=None) as batch_op:
        batch_op.add_column(sa.Column("return_shipment_id", sa.Integer(), nullable=True))
        batch_op.create_foreign_key(
            batch_op.f("fk_powder_return_shipment_id_shipment"),
            "shipment",
            ["return_shipment_id"],
            ["id"],
        )

    with op.batch_alter_table("specimen", schema=None) as batch_op:
        batch_op.add_column(sa.Column("return_shipment_id", sa.Integer(), nullable=True))
        batch_op.create_foreign_key(
            batch_op.f("fk_specimen_return_shipment_id_shipment"),
            "shipment",
            ["return_shipment_id"],
            ["id"],
        )


def downgrade() -> None:
    with op.batch_alter_table("specimen", schema=None) as batch_op:
        batch_op.drop_constraint(
            batch_op.f("fk_specimen_return_shipment_id_shipment"), type_="foreignkey"
        )
        batch_op.drop_column("return_shipment_id")

    with op.batch_alter_table("powder", schema=None) as batch_op:
        batch_op.drop_constraint(
            batch_op.f("fk_powder_return_shipment_id_shipment"), type_="foreignkey"
        )
        batch_op.drop_column("return_shipment_id")

    with op.batch_alter_table("mapping_profile", schema=None) as batch_op:
        batch_op.drop_column("kind")

    with op.batch_alter_table("specimen_photo", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_specimen_photo_specimen_id"))

    op.drop_table("specimen_photo")
    with op.batch_alter_table("event_ref", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_event_ref_ref"))

    op.drop_table("event_ref")
