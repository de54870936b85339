"""A column scanned by mistake can be taken off its batch, and its slot used again.

* ``batch_position`` gains ``removed_at`` and ``removal_reason``: a removed column keeps its
  row (the ledger's facts rebuild every row, a workstation login holds no DELETE, and the
  aliquot's history still tells that it was loaded, then removed, and why).
* The unique key on (``batch_id``, ``slot``) becomes a partial unique index over the columns
  still in their batch (``removed_at IS NULL``), so a removed column's slot can be filled
  again. SQLite drops a table's unique constraint only by rebuilding the table: its indexes
  are read from ``sqlite_master`` first and made again from that same text, as revision
  0011 does (the table has no triggers on SQLite).
* On PostgreSQL a workstation login may set the two new columns only with the removal's own
  ledger event in the same transaction (a deferred check, like revision 0010's).

Revision ID: 0012_removed_positions
Revises: 0011_checks
Create Date: 2026-12-20 09:00:00
"""

from collections.abc import Iterator, Sequence
from contextlib import contextmanager

import sqlalchemy as sa
from alembic import op
from alembic.operations import BatchOperations

revision: str = "0012_removed_positions"
down_revision: str | None = "0011_checks"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

TABLE = "batch_position"
IN_BATCH = "removed_at IS NULL"
UNIQUE = "uq_batch_position_batch_id_slot"
PARTIAL = "uq_batch_position_slot_in_batch"
REMOVAL_EVENT = "batch.position_removed"
GUARD = "batch_position_login_check_removed"


def upgrade() -> None:
    bind = op.get_bind()
    op.add_column(TABLE, sa.Column("removed_at", sa.DateTime(timezone=True), nullable=True))
    op.add_column(TABLE, sa.Column("removal_reason", sa.Text(), nullable=True))
    with _rebuilt(bind) as batch_op:
        batch_op.drop_constraint(UNIQUE, type_="unique")
    op.create_index(
        PARTIAL,
        TABLE,
        ["batch_id", "slot"],
        unique=True,
        sqlite_where=sa.text(IN_BATCH),
        postgresql_where=sa.text(IN_BATCH),
    )
    if bind.dialect.name == "postgresql":
        op.execute(
            f"CREATE CONSTRAINT TRIGGER {GUARD} AFTER UPDATE OF removed_at, removal_reason "
            f"ON {TABLE} DEFERRABLE INITIALLY DEFERRED FOR EACH ROW "
            "WHEN (NOT tracker_owner_session()) "
            f"EXECUTE FUNCTION tracker_check_event('{REMOVAL_EVENT}')"
        )


def downgrade() -> None:
    bind = op.get_bind()
    if bind.dialect.name == "postgresql":
        op.execute(f"DROP TRIGGER IF EXISTS {GUARD} ON {TABLE}")
    op.drop_index(PARTIAL, table_name=TABLE)
    with _rebuilt(bind) as batch_op:
        batch_op.create_unique_constraint(UNIQUE, ["batch_id", "slot"])
    with _rebuilt(bind) as batch_op:
        batch_op.drop_column("removal_reason")
        batch_op.drop_column("removed_at")


@contextmanager
def _rebuilt(bind: sa.Connection) -> Iterator[BatchOperations]:
    """``op.batch_alter_table`` for the table; on SQLite, which rebuilds it, its indexes are
    made again afterwards from their own stored text."""
    kept: list[str] = []
    if bind.dialect.name == "sqlite":
        found = bind.execute(
            sa.text(
                "SELECT name, sql FROM sqlite_master WHERE tbl_name = :table "
                "AND type = 'index' AND sql IS NOT NULL ORDER BY name"
            ),
            {"table": TABLE},
        ).all()
        for name, sql in found:
            op.execute(f"DROP INDEX {name}")
            kept.append(sql)
    with op.batch_alter_table(TABLE, recreate="auto") as batch_op:
        yield batch_op
    for sql in kept:
        op.execute(sql)
