"""Append-only custody ledger: the database itself refuses UPDATE and DELETE on it.

The services never change a ledger row; these triggers make that true for any
other program that opens the file too. (A person with full access to the file
can still drop the triggers: that is what the hash chain and anchors are for.)

Revision ID: 0002_append_only_ledger
Revises: 0001_initial
"""

from collections.abc import Sequence

from alembic import op

revision: str = "0002_append_only_ledger"
down_revision: str | None = "0001_initial"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

MESSAGE = "custody_event is append-only: record a correction event instead"


def upgrade() -> None:
    if op.get_bind().dialect.name == "sqlite":
        for verb in ("UPDATE", "DELETE"):
            op.execute(
                f"CREATE TRIGGER custody_event_no_{verb.lower()} BEFORE {verb} ON custody_event "
                f"BEGIN SELECT RAISE(ABORT, '{MESSAGE}'); END"
            )
    else:
        op.execute(
            "CREATE FUNCTION custody_event_refuse() RETURNS trigger LANGUAGE plpgsql AS $$ "
            f"BEGIN RAISE EXCEPTION '{MESSAGE}'; END $$"
        )
        op.execute(
            "CREATE TRIGGER custody_event_append_only BEFORE UPDATE OR DELETE OR TRUNCATE "
            "ON custody_event FOR EACH STATEMENT EXECUTE FUNCTION custody_event_refuse()"
        )


def downgrade() -> None:
    if op.get_bind().dialect.name == "sqlite":
        op.execute("DROP TRIGGER custody_event_no_update")
        op.execute("DROP TRIGGER custody_event_no_delete")
    else:
        op.execute("DROP TRIGGER custody_event_append_only ON custody_event")
        op.execute("DROP FUNCTION custody_event_refuse()")
