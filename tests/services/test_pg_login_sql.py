"""One login per person on a shared PostgreSQL database: a login's own SQL client.

Whatever a workstation login sends, the database holds it to the rules of revision
0010_logins and to the workstation group's grants. Each test gets its own copy of the demo lab
(tests/logins.py); refusals compare every row of every table before and after (as the owner).
"""

from __future__ import annotations

import re

import pytest
from sqlalchemy import select, text
from sqlalchemy.exc import DBAPIError

from tests.logins import Lab
from tracker.db import logins
from tracker.domain.base import Base
from tracker.domain.ids import Kind, format_id
from tracker.domain.models import Powder

pytestmark = pytest.mark.postgresql

# What the database says when it refuses: a privilege, ownership, or one of the login rules.
REFUSED = re.compile(
    "permission denied|must be owner|needs an operator with the manager role|records only as"
    "|changes only by a correction|needs its ledger event|only .* may change it"
    "|was recorded by|bound to no operator|is not what correction|is matched already"
)


def refused(lab: Lab, person: str, *statements: str) -> str:
    """Run statements in one transaction of the person's own SQL client: refused, no change."""
    before = lab.rows()
    with pytest.raises(DBAPIError) as caught, lab.raw(person) as conn:
        for statement in statements:
            conn.execute(text(statement))
    said = str(caught.value.orig)
    assert REFUSED.search(said), said
    assert lab.rows() == before
    return said


def event(operator: str, action: str, item: str = "") -> str:
    """A ledger event appended by hand (its hash is not checked here: verify would be)."""
    return (
        "INSERT INTO custody_event (seq, at, operator, action, object_ref, parent_ref, payload, "
        f"prev_hash, hash) SELECT max(seq) + 1, now(), '{operator}', '{action}', '{item}', '', "
        "'{}', max(hash), md5(random()::text) || md5(random()::text) FROM custody_event"
    )


def correction(powder: int, value: dict[str, float], entry_by: str, by: str) -> str:
    """A correction row of a powder's mass, naming the latest event."""
    values = ", ".join(f'"{key}": {number!r}' for key, number in value.items())
    return (
        "INSERT INTO correction (item_ref, quantity, entry_table, entry_id, replaced, value, "
        "reason, entry_by, event_seq, recorded_by, recorded_at) "
        f"SELECT '{format_id(Kind.POWDER, powder)}', 'powder mass', 'powder', {powder}, '{{}}', "
        f"'{{{values}}}', 'by hand', '{entry_by}', max(seq), '{by}', now() FROM custody_event"
    )


# ---------------------------------------------------------------- as a technician, by raw SQL

TECHNICIAN_SQL = {
    "make themselves a manager": ["UPDATE operator SET role = 'manager' WHERE code = 'tomas'"],
    "bind their login to a manager": ["UPDATE operator SET login = NULL WHERE code = 'ines'"],
    "add a manager": [
        "INSERT INTO operator (code, name, role, active, created_at) "
        "VALUES ('mallory', 'Mal Lory', 'manager', true, now())"
    ],
    "record an event as someone else": [event("ines", "specimen.checked_in")],
    "record a manager's event": [event("tomas", "operator.added")],
    "amend a loan": [
        "INSERT INTO loan_terms (loan_id, version, kind, effective_from, permitted_tissues, "
        "max_mass_per_specimen_mg, max_total_mass_mg, max_specimens_sampled, due_on, "
        "return_specimens, powder_disposition, solution_disposition, report_data, "
        "acknowledgement, recorded_by, recorded_at) SELECT loan_id, 99, 'allowance', "
        "effective_from, permitted_tissues, 1e6, 1e6, max_specimens_sampled, due_on + 365, "
        "return_specimens, powder_disposition, solution_disposition, report_data, "
        "acknowledgement, 'tomas', now() FROM loan_terms WHERE version = 1 LIMIT 1"
    ],
    "edit the terms": ["UPDATE loan_terms SET max_total_mass_mg = 1e6"],
    "set an accepted value": [
        "INSERT INTO reference_value (reference_material_id, ratio, scale, kind, value, two_sd, "
        "source, recorded_by, created_at) SELECT id, '44/40', 'SRM 915a', 'delta', 0.5, 0.1, "
        "'invented', 'tomas', now() FROM reference_material LIMIT 1"
    ],
    "change a lab setting": [
        "INSERT INTO lab_setting (key, value, updated_by, updated_at) "
        "VALUES ('backdating_window_hours', '100000', 'tomas', now())"
    ],
    "override a loan limit": [
        "INSERT INTO powder (specimen_id, tissue, tare_mg, gross_mg, readability_mg, mass_mg, "
        "mass_u_mg, drilled_at, drilled_by, override_reason, status, created_at) VALUES "
        "(1, 'enamel', 1000, 1009, 0.001, 9, 0.001, now(), 'tomas', 'a forged override', "
        "'available', now())"
    ],
    "override afterwards": ["UPDATE powder SET override_reason = 'afterwards' WHERE id = 7"],
    "backdate an entry": [
        "INSERT INTO backdated_entry (event_seq, item_ref, field, stated_at, recorded_at, "
        "window_hours, recorded_by) SELECT max(seq), 'PW-00007-X', 'drilled_at', "
        "now() - interval '40 days', now(), 72, 'tomas' FROM custody_event"
    ],
    "close a loan": ["UPDATE loan SET status = 'closed'"],
    "change a powder's mass": ["UPDATE powder SET mass_mg = 1.0 WHERE id = 7"],
    "change a solution's mass": ["UPDATE solution SET solution_mass_g = 9 WHERE id = 4"],
    "change the powder taken": ["UPDATE solution SET powder_mass_mg = 0.1 WHERE id = 4"],
    "change an aliquot's mass": ["UPDATE aliquot SET mass_g = 9 WHERE id = 2"],
    "change a recovery": ["UPDATE cut SET recovered_ug = 1 WHERE id = 2"],
    "change what a column loaded": ["UPDATE batch_position SET loaded_ug = 1"],
    "change a result": ["UPDATE result SET delta_permil = 0.5"],  # possible: the schema allows it
    "clear a session's flags": ["UPDATE instrument_session SET flags = '[]'"],
    "change a blank's delta": ["UPDATE column_batch SET blank_deltas = '{}'"],
    "change a residual": ["UPDATE powder SET residual_mg = 0 WHERE residual_mg IS NOT NULL"],
    "change a concentration": ["UPDATE concentration SET value_ug_per_g = 1"],
    "change a measured ratio": ["UPDATE measurement SET ratios = '{}'"],
    "rename a specimen": ["UPDATE specimen SET catalog_number = 'X-1' WHERE id = 1"],
    "change a specimen's name quietly": ["UPDATE specimen SET scientific_name = 'Nobody'"],
    "mark labels printed quietly": ["UPDATE label SET status = 'printed'"],
    "edit the ledger": ["UPDATE custody_event SET payload = '{}'"],
    "edit a correction": ["UPDATE correction SET reason = 'none'"],
    "edit the schema revision": ["UPDATE alembic_version SET version_num = '0001_initial'"],
    "switch the checks off": ["ALTER TABLE powder DISABLE TRIGGER ALL"],
    "drop a check": ["DROP TRIGGER powder_login_check_corrected ON powder"],
    "truncate the ledger": ["TRUNCATE custody_event"],
    "stand in a temporary operator table": [
        "CREATE TEMP TABLE operator AS SELECT * FROM public.operator",
        "UPDATE pg_temp.operator SET role = 'manager'",
        "INSERT INTO reference_value (reference_material_id, ratio, scale, kind, value, two_sd, "
        "source, recorded_by, created_at) SELECT id, '44/40', 'SRM 915a', 'delta', 0.5, 0.1, "
        "'invented', 'tomas', now() FROM reference_material LIMIT 1",
    ],
}


# The rule each case breaks, where it is one of revision 0010's (else a missing privilege).
SAID = {
    "make themselves a manager": "changing operators needs an operator with the manager role",
    "record an event as someone else": "records only as tomas",
    "change a powder's mass": "mass_mg is a measured value; it changes only by a correction",
    "change the powder taken": "powder_mass_mg is a measured value",
    "change a recovery": "recovered_ug is a measured value",
    "change what a column loaded": "batch_position: a change needs its ledger event",
    "change a specimen's name quietly": "specimen: a change needs its ledger event",
}


def test_a_technicians_own_sql_client_is_refused(demo_lab: Lab) -> None:
    """Each attempt in its own transaction on one copy (each changes nothing: checked)."""
    wrong = {}
    for what, statements in TECHNICIAN_SQL.items():
        said = refused(demo_lab, "tomas", *statements)
        if SAID.get(what, "") not in said:
            wrong[what] = said
    assert wrong == {}


def _tables() -> list[str]:
    return [*(table.name for table in Base.metadata.sorted_tables), "alembic_version"]


@pytest.mark.parametrize("person", ["tomas", "ines"])
def test_no_workstation_login_deletes_anything(demo_lab: Lab, person: str) -> None:
    for table in _tables():
        assert "permission denied" in refused(demo_lab, person, f"DELETE FROM {table}")


def test_a_correction_by_hand_is_held_to_the_rules(demo_lab: Lab) -> None:
    """With an event and a correction row, a measured value can change: only the author's
    own (else a manager's), and only to what the correction records."""
    lab = demo_lab
    theirs = lab.drilled_by("ines").id  # the manager's override drill
    value = {"mass_mg": 0.3}
    forged = [event("tomas", "powder.corrected", format_id(Kind.POWDER, theirs))]
    update = f"UPDATE powder SET mass_mg = 0.3 WHERE id = {theirs}"
    said = refused(lab, "tomas", *forged, correction(theirs, value, "tomas", "tomas"), update)
    assert "was recorded by ines, not tomas" in said
    said = refused(lab, "tomas", *forged, correction(theirs, value, "ines", "tomas"), update)
    assert "manager role" in said
    mine = lab.drilled_by("tomas").id
    honest = [
        event("tomas", "powder.corrected"),
        correction(mine, {"mass_mg": 2.5}, *["tomas"] * 2),
    ]
    said = refused(lab, "tomas", *honest, f"UPDATE powder SET mass_mg = 2.6 WHERE id = {mine}")
    assert "is not what correction" in said
    with lab.raw("tomas") as conn:  # the one change the rules let through
        for statement in [*honest, f"UPDATE powder SET mass_mg = 2.5 WHERE id = {mine}"]:
            conn.execute(text(statement))
    assert lab.one(select(Powder.mass_mg).where(Powder.id == mine)) == 2.5


def test_derived_values_change_only_with_a_reduction_or_a_correction(demo_lab: Lab) -> None:
    said = refused(demo_lab, "tomas", event("tomas", "item.moved"), "UPDATE result SET n = 1")
    assert "changed with the event item.moved" in said


def test_a_row_is_matched_only_with_its_event_and_only_once(demo_lab: Lab) -> None:
    """The demo's calcium rerun keeps rows typed by name unmatched (revision 0012)."""
    row = (
        "FROM measurement m JOIN instrument_session s ON s.id = m.session_id "
        "WHERE s.name = 'Ca 2026-11-27 rerun' AND m.run_order"
    )
    cut = "(SELECT min(id) FROM cut)"
    match = f"UPDATE measurement SET role = 'sample', cut_id = {cut} WHERE id = (SELECT m.id "
    assert "needs its ledger event" in refused(demo_lab, "tomas", f"{match}{row} = 6)")
    said = refused(demo_lab, "tomas", event("tomas", "item.moved"), f"{match}{row} = 6)")
    assert "only session.row_matched, session.rows_matched may change it" in said
    said = refused(demo_lab, "tomas", event("tomas", "session.row_matched"), f"{match}{row} = 1)")
    assert "is matched already" in said  # run 1 is a bracketing standard
    with demo_lab.raw("tomas") as conn:  # as the service does it: with its event
        for statement in [event("tomas", "session.row_matched"), f"{match}{row} = 6)"]:
            conn.execute(text(statement))


def test_a_managers_sql_without_the_event_is_refused(demo_lab: Lab) -> None:
    """A manager may change operators, but only as the services do: with the event."""
    promote = "UPDATE operator SET role = 'manager' WHERE code = 'tomas'"
    assert "needs its ledger event" in refused(demo_lab, "ines", promote)
    said = refused(demo_lab, "ines", event("ines", "item.moved"), promote)
    assert "only operator.* may change it" in said


def test_a_login_bound_to_no_one_writes_nothing(demo_lab: Lab) -> None:
    said = refused(demo_lab, "stranger", event("tomas", "specimen.checked_in"))
    assert "bound to no operator" in said


# ---------------------------------------------------------------- the schema and the grants


def test_the_database_guards_exactly_the_measured_columns(demo_lab: Lab) -> None:
    """The columns revision 0010 watches for corrections are the ones the grants list."""
    with demo_lab.db().engine.connect() as conn:
        found = conn.execute(
            text(
                "SELECT c.relname, a.attname FROM pg_trigger t JOIN pg_class c ON c.oid = "
                "t.tgrelid JOIN pg_attribute a ON a.attrelid = t.tgrelid AND a.attnum = ANY "
                "(t.tgattr) WHERE t.tgname LIKE '%\\_login\\_check\\_corrected'"
            )
        ).all()
    watched: dict[str, set[str]] = {}
    for table, column in found:
        watched.setdefault(table, set()).add(column)
    assert watched == {table: set(columns) for table, columns in logins.CORRECTED.items()}
    tables = {table.name: table for table in Base.metadata.sorted_tables}
    for table, columns in logins.UPDATABLE.items():
        assert set(columns) <= set(tables[table].columns.keys()), table
    for table, columns in {**logins.CORRECTED, **logins.DERIVED}.items():
        assert set(columns) <= set(logins.UPDATABLE[table]), table
