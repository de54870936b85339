"""Signed events: where each event came from, its signer's key and signature.

* ``custody_event`` gains ``format`` (the canonical form its hash was computed by: every
  event stored before this revision keeps "tracker-ledger/1", every new one is
  "tracker-ledger/2"), ``os_user``, ``host`` and ``db_user`` (hashed in format 2),
  ``key_id`` and ``signature`` (not hashed: the signature covers the hash). Columns are
  added in place (no table rebuild), so the append-only triggers of revisions 0002 and
  0008 stay, and no stored row is rewritten.
* A partial index finds the few events that say who may sign (operators, roles, keys):
  every unit of work reads them.
* On PostgreSQL ``db_user`` defaults to ``session_user`` for new rows, and a BEFORE INSERT
  trigger refuses an event whose ``db_user`` is not the connection's ``session_user``: a
  client cannot claim another login.

Revision ID: 0009_signing
Revises: 0008_backdating
Create Date: 2026-12-18 10:00:00.000000
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0009_signing"
down_revision: str | None = "0008_backdating"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

# As tracker.domain.authority.AUTHORITY_SQL at this revision (written out: a migration
# never changes with the code after it).
AUTHORITY_SQL = (
    "action IN ('ledger.opened', 'operator.added', 'operator.role_changed', "
    "'operator.deactivated', 'key.registered', 'key.revoked')"
)


def upgrade() -> None:
    columns = (
        sa.Column(
            "format", sa.String(length=20), server_default="tracker-ledger/1", nullable=False
        ),
        sa.Column("os_user", sa.String(length=64), server_default="", nullable=False),
        sa.Column("host", sa.String(length=255), server_default="", nullable=False),
        sa.Column("db_user", sa.String(length=63), server_default="", nullable=False),
        sa.Column("key_id", sa.String(length=16), nullable=True),
        sa.Column("signature", sa.String(length=128), nullable=True),
    )
    for column in columns:
        op.add_column("custody_event", column)
    op.create_index(
        "ix_custody_event_authority",
        "custody_event",
        ["seq"],
        unique=False,
        sqlite_where=sa.text(AUTHORITY_SQL),
        postgresql_where=sa.text(AUTHORITY_SQL),
    )
    if op.get_bind().dialect.name == "postgresql":
        # stored rows keep '' (they were recorded before); a new row says who connected
        op.execute("ALTER TABLE custody_event ALTER COLUMN db_user SET DEFAULT session_user")
        op.execute(
            "CREATE FUNCTION custody_event_session_user() RETURNS trigger LANGUAGE plpgsql AS $$ "
            "BEGIN IF NEW.db_user IS DISTINCT FROM session_user::text THEN "
            "RAISE EXCEPTION 'custody_event.db_user % is not the session user %', "
            "NEW.db_user, session_user; END IF; RETURN NEW; END $$"
        )
        op.execute(
            "CREATE TRIGGER custody_event_session_user BEFORE INSERT ON custody_event "
            "FOR EACH ROW EXECUTE FUNCTION custody_event_session_user()"
        )


def downgrade() -> None:
    if op.get_bind().dialect.name == "postgresql":
        op.execute("DROP TRIGGER custody_event_session_user ON custody_event")
        op.execute("DROP FUNCTION custody_event_session_user()")
    op.drop_index("ix_custody_event_authority", table_name="custody_event")
    for name in ("signature", "key_id", "db_user", "host", "os_user", "format"):
        op.drop_column("custody_event", name)
