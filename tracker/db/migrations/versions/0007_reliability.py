"""Reliability: corrections, an append-only table.

Self-contained: one new table and its triggers; nothing else changes. Like
``custody_event`` (revision 0002), the table refuses UPDATE and DELETE in the
database itself, on SQLite and PostgreSQL.

Revision ID: 0007_reliability
Revises: 0006_reports
Create Date: 2026-12-02 02:19:50.541020
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op


revision: str = "0007_reliability"
down_revision: str | None = "0006_reports"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

APPEND_ONLY = ("correction",)


def upgrade() -> None:
    op.create_table(
        "correction",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("item_ref", sa.String(length=40), nullable=False),
        sa.Column("quantity", sa.String(length=60), nullable=False),
        sa.Column("entry_table", sa.String(length=40), nullable=False),
        sa.Column("entry_id", sa.Integer(), nullable=False),
        sa.Column("replaced", sa.JSON(), nullable=False),
        sa.Column("value", sa.JSON(), nullable=False),
        sa.Column("reason", sa.Text(), nullable=False),
        sa.Column("entry_by", sa.String(length=32), nullable=False),
        sa.Column("supersedes_id", sa.Integer(), nullable=True),
        sa.Column("supersedes_event_seq", sa.Integer(), nullable=True),
        sa.Column("event_seq", sa.Integer(), nullable=False),
        sa.Column("recorded_by", sa.String(length=32), nullable=False),
        sa.Column("recorded_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["entry_by"], ["operator.code"], name=op.f("fk_correction_entry_by_operator")
        ),
        sa.ForeignKeyConstraint(
            ["recorded_by"], ["operator.code"], name=op.f("fk_correction_recorded_by_operator")
        ),
        sa.ForeignKeyConstraint(
            ["supersedes_id"],
            ["correction.id"],
            name=op.f("fk_correction_supersedes_id_correction"),
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_correction")),
    )
    op.create_index(op.f("ix_correction_item_ref"), "correction", ["item_ref"], unique=False)
    for table in APPEND_ONLY:
        _refuse_edits(table)


def _refuse_edits(table: str) -> None:
    message = f"{table} is append-only: record a correction event instead"
    if op.get_bind().dialect.name == "sqlite":
        for verb in ("UPDATE", "DELETE"):
            op.execute(
                f"CREATE TRIGGER {table}_no_{verb.lower()} BEFORE {verb} ON {table} "
                f"BEGIN SELECT RAISE(ABORT, '{message}'); END"
            )
    else:
        op.execute(
            f"CREATE FUNCTION {table}_refuse() RETURNS trigger LANGUAGE plpgsql AS $$ "
            f"BEGIN RAISE EXCEPTION '{message}'; END $$"
        )
        op.execute(
            f"CREATE TRIGGER {table}_append_only BEFORE UPDATE OR DELETE OR TRUNCATE "
            f"ON {table} FOR EACH STATEMENT EXECUTE FUNCTION {table}_refuse()"
        )


def downgrade() -> None:
    for table in APPEND_ONLY:
        if op.get_bind().dialect.name == "sqlite":
            op.execute(f"DROP TRIGGER {table}_no_update")
            op.execute(f"DROP TRIGGER {table}_no_delete")
        else:
            op.execute(f"DROP TRIGGER {table}_append_only ON {table}")
            op.execute(f"DROP FUNCTION {table}_refuse()")
    op.drop_index(op.f("ix_correction_item_ref"), table_name="correction")
    op.drop_table("correction")
