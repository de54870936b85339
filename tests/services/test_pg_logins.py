"""One login per person on a shared PostgreSQL database.

The demo lab (tests/logins.py) is the demo scenario replayed step by step through the login
of the person who did each step; every test gets its own copy. Refusals compare every row of
every table before and after (read as the owner).
"""

from __future__ import annotations

import copy
import re
from collections.abc import Callable, Iterable
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import func, select, text
from sqlalchemy.exc import DBAPIError

from tests.logins import (
    PEOPLE,
    Cluster,
    Lab,
    build_demo_lab,
    cli,
    demo_steps,
    drop_database,
    new_database,
)
from tracker.db import logins
from tracker.domain.base import Base
from tracker.domain.errors import RuleViolation
from tracker.domain.ids import Kind, format_id
from tracker.domain.models import (
    Aliquot,
    BatchPosition,
    Concentration,
    Correction,
    CustodyEvent,
    Cut,
    InstrumentSession,
    Operator,
    Powder,
    Result,
    Solution,
)
from tracker.io.demo import Replay
from tracker.output import jobs
from tracker.services import (
    amendments,
    batch_sheet,
    chemistry,
    corrections,
    corrections_values,
    drilling,
    labels,
    ledger,
    manifests,
    reduction,
    settings,
    specimens,
)
from tracker.services.views import Done

pytestmark = pytest.mark.postgresql

# What the database says when it refuses: a privilege, ownership, or one of the login rules.
REFUSED = re.compile(
    "permission denied|must be owner|needs an operator with the manager role|records only as"
    "|changes only by a correction|needs its ledger event|only .* may change it"
    "|was recorded by|bound to no operator|is not what correction"
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


def one(lab: Lab, statement: Any) -> Any:
    with lab.db().read_session() as session:
        return session.scalars(statement).first()


def drilled_by(lab: Lab, person: str) -> Powder:
    found = one(lab, select(Powder).where(Powder.drilled_by == person).order_by(Powder.id))
    assert isinstance(found, Powder)
    return found


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
    "change a result": ["UPDATE result SET delta_permil = 0"],
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
    theirs = drilled_by(lab, "ines").id  # the manager's override drill
    value = {"mass_mg": 0.3}
    forged = [event("tomas", "powder.corrected", format_id(Kind.POWDER, theirs))]
    update = f"UPDATE powder SET mass_mg = 0.3 WHERE id = {theirs}"
    said = refused(lab, "tomas", *forged, correction(theirs, value, "tomas", "tomas"), update)
    assert "was recorded by ines, not tomas" in said
    said = refused(lab, "tomas", *forged, correction(theirs, value, "ines", "tomas"), update)
    assert "manager role" in said
    mine = drilled_by(lab, "tomas").id
    honest = [
        event("tomas", "powder.corrected"),
        correction(mine, {"mass_mg": 2.5}, *["tomas"] * 2),
    ]
    said = refused(lab, "tomas", *honest, f"UPDATE powder SET mass_mg = 2.6 WHERE id = {mine}")
    assert "is not what correction" in said
    with lab.raw("tomas") as conn:  # the one change the rules let through
        for statement in [*honest, f"UPDATE powder SET mass_mg = 2.5 WHERE id = {mine}"]:
            conn.execute(text(statement))
    assert one(lab, select(Powder.mass_mg).where(Powder.id == mine)) == 2.5


def test_derived_values_change_only_with_a_reduction_or_a_correction(demo_lab: Lab) -> None:
    said = refused(demo_lab, "tomas", event("tomas", "item.moved"), "UPDATE result SET n = 1")
    assert "changed with the event item.moved" in said


def test_a_managers_sql_without_the_event_is_refused(demo_lab: Lab) -> None:
    """A manager may change operators, but only as the services do: with the event."""
    promote = "UPDATE operator SET role = 'manager' WHERE code = 'tomas'"
    assert "needs its ledger event" in refused(demo_lab, "ines", promote)
    said = refused(demo_lab, "ines", event("ines", "item.moved"), promote)
    assert "only operator.* may change it" in said


def test_a_login_bound_to_no_one_writes_nothing(demo_lab: Lab) -> None:
    said = refused(demo_lab, "stranger", event("tomas", "specimen.checked_in"))
    assert "bound to no operator" in said


# ---------------------------------------------------------------- through the services


def _drill(lab: Lab, login: str, actor: str, **extra: str) -> Any:
    request = {"specimen": "SP-00010-U", "tissue": "enameloid", "tare": "1200.000 mg"}
    return drilling.drill(lab.db(login), actor, {"gross": "1200.300 mg", **request, **extra})


@pytest.mark.parametrize(("login", "actor"), [("tomas", "ines"), ("tomas", "priya")])
def test_as_naming_another_person_is_refused(demo_lab: Lab, login: str, actor: str) -> None:
    before = demo_lab.rows()
    with pytest.raises(RuleViolation) as caught:
        _drill(demo_lab, login, actor)
    assert caught.value.field == "--as" and caught.value.value == actor
    assert f"records as {login} only" in caught.value.one_line()
    assert demo_lab.rows() == before
    assert _drill(demo_lab, login, login).item.id  # their own name: recorded


def test_a_login_bound_to_no_one_is_told_so(demo_lab: Lab) -> None:
    before = demo_lab.rows()
    with pytest.raises(RuleViolation, match="bound to no operator") as caught:
        _drill(demo_lab, "stranger", "tomas")
    assert caught.value.field == "--db"
    assert demo_lab.rows() == before


def test_a_privilege_the_grants_lack_is_one_line_naming_the_fix(demo_lab: Lab) -> None:
    """As after an upgrade whose grants were not run again: one line, nothing written."""
    lab = demo_lab
    lab.cluster.admin(f"REVOKE UPDATE ON specimen FROM {lab.cluster.group}", database=lab.name)
    before = lab.rows()
    with pytest.raises(RuleViolation) as caught:
        specimens.check_in(lab.db("tomas"), "tomas", {"specimen": "SP-00011-S", "condition": "ok"})
    said = caught.value.one_line()
    assert said.startswith("--db: the database refused this: permission denied for table specimen")
    assert "tracker db workstation-grants" in said and "\n" not in said
    assert lab.rows() == before


def test_a_technicians_login_gets_no_managers_action(demo_lab: Lab) -> None:
    lab = demo_lab
    before = lab.rows()
    override = {"gross": "1205.000 mg", "override_reason": "the lender agreed by phone"}
    attempts: list[Callable[[], Any]] = [
        lambda: _drill(lab, "tomas", "tomas", **override),
        lambda: _drill(lab, "tomas", "ines", **override),
        lambda: amendments.amend_loan(
            lab.db("tomas"),
            "tomas",
            {
                "loan": "NMFI-25-033",
                "kind": "other",
                "effective_from": "2026-12-01",
                "reason": "more time",
                "due_on": "2029-01-01",
            },
        ),
    ]
    for attempt in attempts:
        with pytest.raises(RuleViolation, match=r"manager role|records as tomas only"):
            attempt()
    assert lab.rows() == before


def test_corrections_and_reductions_work_as_each_persons_login(demo_lab: Lab) -> None:
    """Every kind of correction, by its author's own login (and a manager's for another's)."""
    lab = demo_lab
    powder = drilled_by(lab, "tomas")
    solution = one(lab, select(Solution).where(Solution.id == 4))
    aliquot = one(lab, select(Aliquot).join(Aliquot.positions).order_by(Aliquot.id))
    conc = one(lab, select(Concentration).where(Concentration.solution_id == aliquot.solution_id))
    cut = one(lab, select(Cut).where(Cut.id == 2))
    session = one(lab, select(InstrumentSession).order_by(InstrumentSession.id))
    before = {r.id: r.created_at for r in _results(lab)}
    loaded = one(lab, select(BatchPosition.loaded_ug).where(BatchPosition.aliquot_id == aliquot.id))
    tare = f"{powder.tare_mg:.3f} mg"
    done: list[Done[Any]] = [
        corrections.correct_weighing(
            lab.db("tomas"),
            "tomas",
            {
                "item": powder.public_id,
                "tare": tare,
                "gross": f"{powder.gross_mg + 0.01:.3f} mg",
                "reason": "misread the balance",
            },
        ),
        corrections.correct_weighing(
            lab.db("priya"),
            "priya",
            {
                "item": solution.public_id,
                "tare": "10000.0 mg",
                "gross": "15100.0 mg",
                "reason": "tare of another vial",
            },
        ),
        corrections.correct_powder_taken(
            lab.db("priya"),
            "priya",
            {
                "solution": solution.public_id,
                "powder_taken": f"{solution.powder_mass_mg - 0.01:.3f} mg",
                "reason": "checked against the notebook",
            },
        ),
        corrections.correct_weighing(
            lab.db("priya"),
            "priya",
            {
                "item": aliquot.public_id,
                "tare": "1000.0 mg",
                "gross": f"{1000 + aliquot.mass_g * 1000 + 1:.1f} mg",
                "reason": "a drop more",
            },
        ),
        corrections_values.correct_concentration(
            lab.db("priya"),
            "priya",
            {
                "solution": format_id(Kind.SOLUTION, conc.solution_id),
                "element": conc.element,
                "value": f"{conc.value_ug_per_g + 1} ug/g",
                "relative_uncertainty_percent": 1.5,
                "reason": "recalibrated",
            },
        ),
        corrections_values.correct_recovery(
            lab.db("ines"),
            "ines",  # a manager corrects another's entry from her own login
            {"cut": cut.public_id, "recovered": "0.0101 mg", "reason": "re-measured"},
        ),
        reduction.reduce_session(lab.db("tomas"), "tomas", {"session": session.public_id}),
    ]
    events = [one(lab, select(CustodyEvent).where(CustodyEvent.seq == d.event_seq)) for d in done]
    assert [e.operator for e in events] == [
        "tomas",
        "priya",
        "priya",
        "priya",
        "priya",
        "ines",
        "tomas",
    ]
    assert one(lab, select(func.count()).select_from(Correction)) == 6
    assert one(lab, select(Cut.recovered_ug).where(Cut.id == 2)) == pytest.approx(10.1)
    after = {r.id: r.created_at for r in _results(lab)}
    assert after.keys() == before.keys()  # computed again in place, none deleted
    again = [r.id for r in _results(lab) if r.session_id == session.id]
    assert again and all(after[key] > before[key] for key in again)
    now = one(lab, select(BatchPosition.loaded_ug).where(BatchPosition.aliquot_id == aliquot.id))
    assert now != loaded  # the aliquot's mass and its solution's concentration changed it
    assert ledger.verify(lab.db("tomas")).ok


def _results(lab: Lab) -> list[Result]:
    with lab.db().read_session() as session:
        return list(session.scalars(select(Result)))


def test_what_the_demo_does_not_do_works_as_each_persons_login(
    demo_lab: Lab, tmp_path: Path
) -> None:
    """Settings, a corrected manifest, a batch sheet and printing labels, by own logins."""
    lab = demo_lab
    done: list[Done[Any]] = [
        settings.set_backdating_window(lab.db("ines"), "ines", {"window": "5 days"}),
        labels.set_uri_prefix(lab.db("ines"), "ines", {"uri_prefix": "https://lab.invalid/i/"}),
        labels.set_uri_prefix(lab.db("ines"), "ines", {"uri_prefix": None}),
    ]
    fixed = b"catalogNumber,locality\nKFMNH P 20311,Invented Quarry 2\n"
    manifest = {"loan": "KF-2026-014", "filename": "list.csv", "content": fixed}
    imported = manifests.import_manifest(lab.db("ines"), "ines", manifest)
    assert imported.updated and imported.event_seq is not None
    batch = chemistry.create_batch(
        lab.db("priya"),
        "priya",
        {
            "name": "Ca 2026-12",
            "performed_on": "2026-12-01",
            "element": "Ca",
            "resin": "DGA",
            "elution_scheme": "load, rinse, elute",
            "cut_names": "matrix,Ca",
        },
    )
    rows = (
        "slot,kind,item,loaded,matrix,Ca\n1,blank,,,,0.050 ug\n2,reference,SRM 915a,10 ug,,9.9 ug\n"
    )
    sheet = {"batch": batch.item.id, "filename": "cols.csv", "content": rows.encode()}
    done += [batch, batch_sheet.enter_sheet(lab.db("priya"), "priya", sheet)]
    printed = jobs.print_queue(lab.db("tomas"), "tomas", stock="a4-65", out=tmp_path / "l.pdf")
    assert printed.job.labels
    with lab.db().read_session() as session:
        made = dict(session.execute(select(CustodyEvent.seq, CustodyEvent.operator)).all())
    seqs = [d.event_seq for d in done] + [imported.event_seq, printed.event_seq]
    assert [made[seq] for seq in seqs] == ["ines"] * 3 + ["priya"] * 2 + ["ines", "tomas"]
    assert labels.label_settings(lab.db("tomas")).uri_prefix is None
    assert ledger.verify(lab.db("tomas")).ok


def test_a_managers_own_login_does_a_managers_work(demo_lab: Lab) -> None:
    done = amendments.amend_loan(
        demo_lab.db("ines"),
        "ines",
        {
            "loan": "MDGC/LN/0457",
            "kind": "extension",
            "effective_from": "2026-12-01",
            "reason": "the lender agreed in writing",
            "due_on": "2029-06-30",
        },
    )
    made = one(demo_lab, select(CustodyEvent).where(CustodyEvent.seq == done.event_seq))
    assert (made.action, made.operator) == ("loan.amended", "ines")


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


# ---------------------------------------------------------------- a day's work


@pytest.mark.slow
def test_a_days_work_as_each_persons_own_login(login_cluster: Cluster, tmp_path: Path) -> None:
    """The whole demo — check-ins, drills, dissolutions, concentrations, aliquots, batches,
    cuts, instrument imports, reductions, amendments, labels — replayed through the login of
    the person doing each step. The first step of each kind is first tried through another
    person's login: refused, nothing written. Then a report, by a technician's login."""
    tried: dict[str, str] = {}

    def probe(lab: Lab, replay: Replay, number: int, step: dict[str, Any]) -> None:
        with lab.db().read_session() as session:
            bound = set(session.scalars(select(Operator.code).where(Operator.login.is_not(None))))
        other = next((p for p in PEOPLE if p in bound and p != step["by"]), None)
        if step["do"] in tried or other is None:
            return
        before = lab.rows()
        replay.db = lab.db(other)
        with pytest.raises(RuleViolation) as caught:
            replay.run(number, copy.deepcopy(step))  # resolving a step's files takes them out
        assert (caught.value.field, caught.value.value) == ("--as", step["by"])
        assert lab.rows() == before
        tried[step["do"]] = other

    name = new_database(login_cluster)
    try:
        lab = build_demo_lab(login_cluster, name, probe)
        _check_the_days_work(lab, tried.keys(), tmp_path / "return.json")
        lab.close()
    finally:
        drop_database(login_cluster, name)


def _check_the_days_work(lab: Lab, tried: Iterable[str], out: Path) -> None:
    kinds = {"checkin", "drill", "dissolve", "aliquot", "batch", "session_import", "reduce"}
    assert kinds | {"amend", "position", "cut"} <= set(tried)
    report = cli(
        "--db",
        lab.url("priya"),
        "--as",
        "priya",
        "report",
        "return",
        "NMFI-25-033",
        "--format",
        "json",
        "--out",
        str(out),
    )
    assert report.exit_code == 0, report.output
    with lab.db().read_session() as session:
        events = session.execute(
            select(CustodyEvent.action, CustodyEvent.operator).order_by(CustodyEvent.seq)
        ).all()
    work = [who for action, who in events if action != "operator.login_bound"]
    assert work == ["ines"] + [step["by"] for step in demo_steps()] + ["priya"]
    assert events[-1].action == "report.generated"
    assert ledger.verify(lab.db("tomas")).ok
