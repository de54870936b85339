"""Labels: the print queue, print jobs and lab-wide label settings.

Self-contained: three new tables, nothing else changes.

Revision ID: 0005_labels
Revises: 0004_instrument
Create Date: 2026-12-02 01:41:49.849233
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op


revision: str = "0005_labels"
down_revision: str | None = "0004_instrument"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "label_job",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column(
            "kind",
            sa.Enum("print", "reprint", name="labeljobkind", native_enum=False, length=16),
            nullable=False,
        ),
        sa.Column("stock", sa.String(length=60), nullable=False),
        sa.Column("start", sa.Integer(), nullable=False),
        sa.Column("labels", sa.Integer(), nullable=False),
        sa.Column("pages", sa.Integer(), nullable=False),
        sa.Column("sha256", sa.String(length=64), nullable=False),
        sa.Column("printer", sa.String(length=120), nullable=True),
        sa.Column("reason", sa.Text(), nullable=True),
        sa.Column("operator", sa.String(length=32), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["operator"], ["operator.code"], name=op.f("fk_label_job_operator_operator")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_label_job")),
    )
    op.create_table(
        "label_setting",
        sa.Column("key", sa.String(length=40), nullable=False),
        sa.Column("value", sa.Text(), nullable=False),
        sa.Column("updated_by", sa.String(length=32), nullable=False),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["updated_by"], ["operator.code"], name=op.f("fk_label_setting_updated_by_operator")
        ),
        sa.PrimaryKeyConstraint("key", name=op.f("pk_label_setting")),
    )
    op.create_table(
        "label",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("item_ref", sa.String(length=40), nullable=False),
        sa.Column(
            "status",
            sa.Enum(
                "queued", "printed", "cancelled", name="labelstatus", native_enum=False, length=16
            ),
            nullable=False,
        ),
        sa.Column("queued_event_seq", sa.Integer(), nullable=False),
        sa.Column("queued_by", sa.String(length=32), nullable=False),
        sa.Column("queued_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("job_id", sa.Integer(), nullable=True),
        sa.ForeignKeyConstraint(["job_id"], ["label_job.id"], name=op.f("fk_label_job_id_label_job")),
        sa.ForeignKeyConstraint(
            ["queued_by"], ["operator.code"], name=op.f("fk_label_queued_by_operator")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_label")),
    )
    with op.batch_alter_table("label", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_label_item_ref"), ["item_ref"], unique=False)
        batch_op.create_index(batch_op.f("ix_label_job_id"), ["job_id"], unique=False)
        batch_op.create_index(batch_op.f("ix_label_status"), ["status"], unique=False)


def downgrade() -> None:
    with op.batch_alter_table("label", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_label_status"))
        batch_op.drop_index(batch_op.f("ix_label_job_id"))
        batch_op.drop_index(batch_op.f("ix_label_item_ref"))

    op.drop_table("label")
    op.drop_table("label_setting")
    op.drop_table("label_job")
