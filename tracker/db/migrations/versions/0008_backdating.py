"""Backdated entries, lab-wide settings, and append-only tables that refuse overwriting inserts.

* ``backdated_entry``: one row per entry a manager dated further back than the lab's window
  (append-only, like the ledger).
* ``label_setting`` becomes ``lab_setting``: the label URI prefix and the backdating window
  are both lab-wide settings, kept in one table (rows copied as they are).
* The append-only tables refuse an INSERT over a row that is already there. On SQLite,
  ``INSERT OR REPLACE`` (and ``REPLACE``) resolves a key conflict by deleting the old row
  *without* firing its delete triggers unless ``PRAGMA recursive_triggers`` is on — and
  that pragma belongs to each connection, so another program opening the file would not
  have it. A BEFORE INSERT trigger that raises when a row with any of the table's unique
  keys exists does not depend on it; it also refuses ``INSERT OR IGNORE`` and
  ``ON CONFLICT DO UPDATE``/``DO NOTHING`` loudly instead of letting them pass in silence.
  On PostgreSQL, ``ON CONFLICT DO UPDATE`` was already refused (the statement-level
  BEFORE UPDATE triggers of revisions 0002/0007 fire, and the application role of the
  README holds no UPDATE privilege), but ``ON CONFLICT DO NOTHING`` passed silently; the
  same row-level BEFORE INSERT check (it runs before the conflict is looked for) refuses it.
* ``event_ref`` (revision 0006: which further items an event concerns) is written once
  with its event and never changed: it now refuses UPDATE and DELETE too. Its whole row is
  its key, so an insert over an existing row could change nothing: no insert check.

A plain INSERT of a new row stays possible at the SQL level — appending is what these
tables are for; a forged ledger event is caught by the hash chain (``tracker ledger
verify``), not by the database.

Revision ID: 0008_backdating
Revises: 0007_reliability
Create Date: 2026-12-04 19:02:01.360362
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0008_backdating"
down_revision: str | None = "0007_reliability"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

# Every unique key of each append-only table: an insert matching any of them is refused.
UNIQUE_KEYS: dict[str, tuple[str, ...]] = {
    "custody_event": ("seq", "hash"),
    "correction": ("id",),
    "backdated_entry": ("id", "event_seq"),
}
# Tables made append-only here (custody_event and correction already are: 0002, 0007).
NEW_APPEND_ONLY = ("backdated_entry", "event_ref")


def upgrade() -> None:
    _lab_setting()
    _backdated_entry()
    for table in NEW_APPEND_ONLY:
        _refuse_edits(table)
    for table, keys in UNIQUE_KEYS.items():
        _refuse_overwrite(table, keys)


def _lab_setting() -> None:
    op.create_table(
        "lab_setting",
        sa.Column("key", sa.String(length=40), nullable=False),
        sa.Column("value", sa.Text(), nullable=False),
        sa.Column("updated_by", sa.String(length=32), nullable=False),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["updated_by"], ["operator.code"], name=op.f("fk_lab_setting_updated_by_operator")
        ),
        sa.PrimaryKeyConstraint("key", name=op.f("pk_lab_setting")),
    )
    op.execute(
        "INSERT INTO lab_setting (key, value, updated_by, updated_at) "
        "SELECT key, value, updated_by, updated_at FROM label_setting"
    )
    op.drop_table("label_setting")


def _backdated_entry() -> None:
    op.create_table(
        "backdated_entry",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("event_seq", sa.Integer(), nullable=False),
        sa.Column("item_ref", sa.String(length=40), nullable=False),
        sa.Column("field", sa.String(length=40), nullable=False),
        sa.Column("stated_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("recorded_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("window_hours", sa.Integer(), nullable=False),
        sa.Column("recorded_by", sa.String(length=32), nullable=False),
        sa.Column("loan_id", sa.Integer(), nullable=True),
        sa.Column("specimen_id", sa.Integer(), nullable=True),
        sa.ForeignKeyConstraint(
            ["loan_id"], ["loan.id"], name=op.f("fk_backdated_entry_loan_id_loan")
        ),
        sa.ForeignKeyConstraint(
            ["recorded_by"],
            ["operator.code"],
            name=op.f("fk_backdated_entry_recorded_by_operator"),
        ),
        sa.ForeignKeyConstraint(
            ["specimen_id"], ["specimen.id"], name=op.f("fk_backdated_entry_specimen_id_specimen")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_backdated_entry")),
        sa.UniqueConstraint("event_seq", name=op.f("uq_backdated_entry_event_seq")),
    )
    with op.batch_alter_table("backdated_entry", schema=None) as batch_op:
        for column in ("item_ref", "loan_id", "specimen_id"):
            batch_op.create_index(
                batch_op.f(f"ix_backdated_entry_{column}"), [column], unique=False
            )


def _refuse_edits(table: str) -> None:
    """UPDATE and DELETE (and TRUNCATE) refused, as revisions 0002 and 0007 do."""
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


def _refuse_overwrite(table: str, keys: tuple[str, ...]) -> None:
    """An INSERT whose row shares any unique key with a stored row is refused, whatever its
    conflict clause (OR REPLACE, OR IGNORE, ON CONFLICT ...)."""
    message = f"{table} is append-only: a row with this key is already recorded"
    clash = " OR ".join(f"{key} = NEW.{key}" for key in keys)
    if op.get_bind().dialect.name == "sqlite":
        op.execute(
            f"CREATE TRIGGER {table}_no_overwrite BEFORE INSERT ON {table} "
            f"WHEN EXISTS (SELECT 1 FROM {table} WHERE {clash}) "
            f"BEGIN SELECT RAISE(ABORT, '{message}'); END"
        )
    else:
        op.execute(
            f"CREATE FUNCTION {table}_refuse_overwrite() RETURNS trigger LANGUAGE plpgsql AS $$ "
            f"BEGIN IF EXISTS (SELECT 1 FROM {table} WHERE {clash}) THEN "
            f"RAISE EXCEPTION '{message}'; END IF; RETURN NEW; END $$"
        )
        op.execute(
            f"CREATE TRIGGER {table}_no_overwrite BEFORE INSERT ON {table} "
            f"FOR EACH ROW EXECUTE FUNCTION {table}_refuse_overwrite()"
        )


def downgrade() -> None:
    sqlite = op.get_bind().dialect.name == "sqlite"
    for table in UNIQUE_KEYS:
        if sqlite:
            op.execute(f"DROP TRIGGER {table}_no_overwrite")
        else:
            op.execute(f"DROP TRIGGER {table}_no_overwrite ON {table}")
            op.execute(f"DROP FUNCTION {table}_refuse_overwrite()")
    for table in NEW_APPEND_ONLY:
        if sqlite:
            op.execute(f"DROP TRIGGER {table}_no_update")
            op.execute(f"DROP TRIGGER {table}_no_delete")
        else:
            op.execute(f"DROP TRIGGER {table}_append_only ON {table}")
            op.execute(f"DROP FUNCTION {table}_refuse()")
    with op.batch_alter_table("backdated_entry", schema=None) as batch_op:
        for column in ("specimen_id", "loan_id", "item_ref"):
            batch_op.drop_index(batch_op.f(f"ix_backdated_entry_{column}"))
    op.drop_table("backdated_entry")
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
    op.execute(
        "INSERT INTO label_setting (key, value, updated_by, updated_at) "
        "SELECT key, value, updated_by, updated_at FROM lab_setting WHERE key = 'uri_prefix'"
    )
    op.drop_table("lab_setting")
