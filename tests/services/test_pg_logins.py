"""One login per person on a shared PostgreSQL database.

Through the services: each person's login records as them and no one else, does a day's
work, and gets no manager's action. The demo lab (tests/logins.py) is the demo scenario
replayed step by step through the login of the person who did each step; every test gets
its own copy. Refusals compare every row of every table before and after (as the owner).
A login's own SQL client: test_pg_login_sql.py.
"""

from __future__ import annotations

import copy
from collections.abc import Callable, Iterable
from decimal import Decimal
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import func, select

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
from tracker.demo import Replay
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
    Result,
    Solution,
)
from tracker.output import jobs
from tracker.services.admin import backdating
from tracker.services.bench import batch_sheet, chemistry, drilling
from tracker.services.core.views import Done
from tracker.services.corrections import measured_values, weighings
from tracker.services.instrument import reduction
from tracker.services.labels import handling
from tracker.services.ledger import chain
from tracker.services.loans import amendments, manifests, specimens

pytestmark = pytest.mark.postgresql

# What the database says when it refuses: a privilege, ownership, or one of the login rules.
# ---------------------------------------------------------------- through the services


def _drill(lab: Lab, login: str, actor: str, **extra: str) -> Any:
    request = {"specimen": "SP-00010-U", "tissue": "enameloid", "tare": "1200.000 mg"}
    return drilling.drill(lab.db(login), actor, {"gross": "1200.300 mg", **request, **extra})


@pytest.mark.parametrize(("login", "actor"), [("tomas", "ines"), ("tomas", "priya")])
def test_as_naming_another_person_is_refused(demo_lab: Lab, login: str, actor: str) -> None:
    before = demo_lab.rows()
    with pytest.raises(RuleViolation) as caught:
        _drill(demo_lab, login, actor)
    assert caught.value.field == "operator" and caught.value.value == actor
    assert f"records as {login} only" in caught.value.one_line()
    assert demo_lab.rows() == before
    assert _drill(demo_lab, login, login).item.id  # their own name: recorded


def test_a_login_bound_to_no_one_is_told_so(demo_lab: Lab) -> None:
    before = demo_lab.rows()
    with pytest.raises(RuleViolation, match="bound to no operator") as caught:
        _drill(demo_lab, "stranger", "tomas")
    assert caught.value.field == "database"
    assert demo_lab.rows() == before


def test_a_privilege_the_grants_lack_is_one_line_naming_the_fix(demo_lab: Lab) -> None:
    """As after an upgrade whose grants were not run again: one line, nothing written."""
    lab = demo_lab
    lab.cluster.admin(f"REVOKE UPDATE ON specimen FROM {lab.cluster.group}", database=lab.name)
    before = lab.rows()
    with pytest.raises(RuleViolation) as caught:
        specimens.check_in(lab.db("tomas"), "tomas", {"specimen": "SP-00011-S", "condition": "ok"})
    said = caught.value.one_line()
    assert said.startswith(
        "database: the database refused this: permission denied for table specimen"
    )
    assert "grants the workstation group its privileges again" in said and "\n" not in said
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
    powder = lab.drilled_by("tomas")
    solution = lab.one(select(Solution).where(Solution.id == 4))
    aliquot = lab.one(select(Aliquot).join(Aliquot.positions).order_by(Aliquot.id))
    conc = lab.one(select(Concentration).where(Concentration.solution_id == aliquot.solution_id))
    cut = lab.one(select(Cut).where(Cut.id == 2))
    session = lab.one(select(InstrumentSession).order_by(InstrumentSession.id))
    before = {r.id: r.created_at for r in _results(lab)}
    loaded = lab.one(select(BatchPosition.loaded_ug).where(BatchPosition.aliquot_id == aliquot.id))
    tare = f"{powder.tare_mg:.3f} mg"
    done: list[Done[Any]] = [
        weighings.correct_weighing(
            lab.db("tomas"),
            "tomas",
            {
                "item": powder.public_id,
                "tare": tare,
                "gross": f"{powder.gross_mg + Decimal('0.01'):.3f} mg",
                "reason": "misread the balance",
            },
        ),
        weighings.correct_weighing(
            lab.db("priya"),
            "priya",
            {
                "item": solution.public_id,
                "tare": "10000.0 mg",
                "gross": "12100.0 mg",  # 2.1 g: its Ca stays within what its powder holds
                "reason": "tare of another vial",
            },
        ),
        weighings.correct_powder_taken(
            lab.db("priya"),
            "priya",
            {
                "solution": solution.public_id,
                "powder_taken": f"{solution.powder_mass_mg - Decimal('0.01'):.3f} mg",
                "reason": "checked against the notebook",
            },
        ),
        weighings.correct_weighing(
            lab.db("priya"),
            "priya",
            {
                "item": aliquot.public_id,
                "tare": "1000.0 mg",
                "gross": f"{1000 + aliquot.mass_g * 1000 + 1:.1f} mg",
                "reason": "a drop more",
            },
        ),
        measured_values.correct_concentration(
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
        measured_values.correct_recovery(
            lab.db("ines"),
            "ines",  # a manager corrects another's entry from her own login
            {"cut": cut.public_id, "recovered": "0.0101 mg", "reason": "re-measured"},
        ),
        reduction.reduce_session(lab.db("tomas"), "tomas", {"session": session.public_id}),
    ]
    events = [lab.one(select(CustodyEvent).where(CustodyEvent.seq == d.event_seq)) for d in done]
    assert [e.operator for e in events] == [
        "tomas",
        "priya",
        "priya",
        "priya",
        "priya",
        "ines",
        "tomas",
    ]
    assert lab.one(select(func.count()).select_from(Correction)) == 6
    assert float(lab.one(select(Cut.recovered_ug).where(Cut.id == 2))) == pytest.approx(10.1)
    after = {r.id: r.created_at for r in _results(lab)}
    assert after.keys() == before.keys()  # computed again in place, none deleted
    again = [r.id for r in _results(lab) if r.session_id == session.id]
    assert again and all(after[key] > before[key] for key in again)
    now = lab.one(select(BatchPosition.loaded_ug).where(BatchPosition.aliquot_id == aliquot.id))
    assert now != loaded  # the aliquot's mass and its solution's concentration changed it
    assert chain.verify(lab.db("tomas")).ok


def _results(lab: Lab) -> list[Result]:
    with lab.db().read_session() as session:
        return list(session.scalars(select(Result)))


def test_what_the_demo_does_not_do_works_as_each_persons_login(
    demo_lab: Lab, tmp_path: Path
) -> None:
    """Settings, a corrected manifest, a batch sheet and printing labels, by own logins."""
    lab = demo_lab
    done: list[Done[Any]] = [
        backdating.set_backdating_window(lab.db("ines"), "ines", {"window": "5 days"}),
        handling.set_uri_prefix(lab.db("ines"), "ines", {"uri_prefix": "https://lab.invalid/i/"}),
        handling.set_uri_prefix(lab.db("ines"), "ines", {"uri_prefix": None}),
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
    assert handling.label_settings(lab.db("tomas")).uri_prefix is None
    assert chain.verify(lab.db("tomas")).ok


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
    made = demo_lab.one(select(CustodyEvent).where(CustodyEvent.seq == done.event_seq))
    assert (made.action, made.operator) == ("loan.amended", "ines")


# ---------------------------------------------------------------- a day's work


@pytest.mark.slow
def test_a_days_work_as_each_persons_own_login(login_cluster: Cluster, tmp_path: Path) -> None:
    """The whole demo — check-ins, drills, dissolutions, concentrations, aliquots, batches,
    cuts, instrument imports, reductions, amendments, labels — replayed through the login of
    the person doing each step. The first step of each kind is first tried through another
    person's login: refused, nothing written. Then a return report, by the manager's own login
    (its anchor is signed by a manager)."""
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
        assert (caught.value.field, caught.value.value) == ("operator", step["by"])
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
        lab.url("ines"),
        "--as",
        "ines",
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
    assert work == ["ines"] + [step["by"] for step in demo_steps()] + ["ines"]
    assert events[-1].action == "report.generated"
    assert chain.verify(lab.db("tomas")).ok
