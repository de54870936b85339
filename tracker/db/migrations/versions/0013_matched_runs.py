"""Instrument rows matched after their import.

A person may say what an unmatched row of a session measured (or have the rows whose
sample names are catalogue numbers matched): the service changes the row's ``role`` and
its target (``cut_id``, ``reference_material_id``, ``position_id``), which revision 0010's
rules did not let a workstation login change. On PostgreSQL (SQLite has no logins, so
nothing changes there):

* the grants (``tracker db workstation-grants``, from ``tracker/db/logins.py``) let the
  workstation group UPDATE those four columns of ``measurement``;
* as every table the services update, a change needs its ledger event recorded in the
  same transaction, and a change of those columns one of the matching events;
* a row is matched once: a row that is no longer unmatched keeps what it measured.

Revision ID: 0013_matched_runs
Revises: 0012_removed_positions
Create Date: 2026-12-05 09:00:00
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0013_matched_runs"
down_revision: str | None = "0012_removed_positions"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

MATCHED = ("role", "cut_id", "reference_material_id", "position_id")
MATCHING = ("session.row_matched", "session.rows_matched")
NOT_OWNER = "NOT tracker_owner_session()"


def upgrade() -> None:
    if op.get_bind().dialect.name != "postgresql":
        return
    schema = op.get_bind().execute(sa.text("SELECT current_schema()")).scalar_one()
    op.execute(
        "CREATE FUNCTION tracker_matched_once() RETURNS trigger LANGUAGE plpgsql "
        f'SET search_path = "{schema}", pg_temp AS $$ BEGIN '
        "RAISE EXCEPTION 'measurement: run % of session % is matched already; a matched "
        "row keeps what it measured', OLD.run_order, OLD.session_id USING ERRCODE = '42501'; "
        "END $$"
    )
    columns = ", ".join(MATCHED)
    op.execute(
        f"CREATE TRIGGER measurement_login_matched_once BEFORE UPDATE OF {columns} "
        f"ON measurement FOR EACH ROW WHEN (OLD.role <> 'unmatched' AND {NOT_OWNER}) "
        "EXECUTE FUNCTION tracker_matched_once()"
    )
    # fired at COMMIT in the order of their names: the particular rule first (see 0010)
    patterns = ", ".join(f"'{action}'" for action in MATCHING)
    for name, of, actions in (("check_matched", f" OF {columns}", patterns), ("event", "", "'%'")):
        op.execute(
            f"CREATE CONSTRAINT TRIGGER measurement_login_{name} AFTER UPDATE{of} "
            f"ON measurement DEFERRABLE INITIALLY DEFERRED FOR EACH ROW WHEN ({NOT_OWNER}) "
            f"EXECUTE FUNCTION tracker_check_event({actions})"
        )


def downgrade() -> None:
    if op.get_bind().dialect.name != "postgresql":
        return
    for name in ("event", "check_matched", "matched_once"):
        op.execute(f"DROP TRIGGER IF EXISTS measurement_login_{name} ON measurement")
    op.execute("DROP FUNCTION IF EXISTS tracker_matched_once()")
