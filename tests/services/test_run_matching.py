"""Unmatched instrument rows matched after the import, by hand and by catalogue number,
through the services on both backends."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import pytest
from sqlalchemy import func, select

from tests import factories as make
from tests.conftest import Counts
from tests.services.test_instrument import PROFILE, STD, delta_row, export
from tracker.db.database import Database
from tracker.domain.errors import InputError, NotFound, RuleViolation
from tracker.domain.ids import Kind, format_id
from tracker.domain.models import CustodyEvent, Measurement, MeasurementRole, Result
from tracker.services.bench import chemistry, columns, solutions
from tracker.services.instrument import reduction, run_matching, session_detail, sessions
from tracker.services.loans import specimens


def specimen(db: Database, loan: str, catalog: str, **extra: str) -> str:
    request: dict[str, Any] = {"loan": loan, "catalog_number": catalog, "extra": extra}
    answer = specimens.add_specimen(db, "boss", request)
    specimens.check_in(db, "tech", {"specimen": answer.item.id, "condition": "complete"})
    return answer.item.id


def solution_of(db: Database, specimen_id: str) -> str:
    solution = make.solution(db, make.powder(db, specimen_id))
    make.concentration(db, solution, "500 ug/g")
    return solution


def aliquot_of(db: Database, solution: str) -> str:
    return make.aliquot(db, solution, grams="0.0200")


def cut_of(db: Database, batch: str, aliquot: str, cut: str = "Ca") -> str:
    request = {"batch": batch, "kind": "sample", "aliquot": aliquot}
    position = chemistry.add_position(db, "tech", request).item.id
    request = {"position": position, "cut": cut, "recovered": "9.000 ug"}
    return columns.record_cut(db, "tech", request).item.id


@dataclass
class Lab:
    session: str
    cut_a: str  # of specimen "KF P 101", measured at run 2 by its label
    cut_b: str  # of "KF P 102", also known as OLD-7
    sr_cut: str  # a strontium cut of the first specimen
    specimen_c: str  # two Ca cuts


# What each run of the export names, and what matching it by catalogue number should find.
RUNS = {
    2: "{cut_a}",  # matched at the import by its label
    4: "tooth rerun",  # the lab's own name: only a person can say what it is
    6: "kfp101",  # specimen A's catalogue number, written without spaces, any case
    8: "old-7",  # specimen B's other catalogue number
    10: "KF P 103",  # specimen C, with two Ca cuts
    12: "dup 1",  # the catalogue number of two specimens
}
LAST = 14  # after the last standard: cannot be reduced, whatever it names


def lab(db: Database) -> Lab:
    loan, other_loan = make.loan(db), make.loan(db)
    a = specimen(db, loan, "KF P 101")
    b = specimen(db, loan, "KF P 102", otherCatalogNumbers="OLD-7 | X 9")
    c = specimen(db, loan, "KF P 103")
    specimen(db, loan, "DUP 1")
    specimen(db, other_loan, "dup 1")
    batch = make.batch(db)
    solution_a, solution_c = solution_of(db, a), solution_of(db, c)
    cut_a = cut_of(db, batch, aliquot_of(db, solution_a))
    cut_b = cut_of(db, batch, aliquot_of(db, solution_of(db, b)))
    cut_of(db, batch, aliquot_of(db, solution_c))
    cut_of(db, batch, aliquot_of(db, solution_c))
    sr_batch = chemistry.create_batch(
        db,
        "tech",
        {
            "name": "Sr batch",
            "performed_on": "2026-01-05",
            "element": "Sr",
            "resin": "Sr-spec",
            "elution_scheme": "load, rinse, elute",
            "cut_names": "Sr",
        },
    ).item.id
    request = {"solution": solution_a, "element": "Sr", "value": "1.2 ug/g"}
    solutions.record_concentration(db, "tech", request | {"relative_uncertainty_percent": 2})
    sr_cut = cut_of(db, sr_batch, aliquot_of(db, solution_a), "Sr")
    sessions.save_profile(db, "tech", {"name": "p1", "definition": PROFILE})
    rows = []
    for run in range(1, LAST, 2):
        rows.append(delta_row(run, "STD-X", STD, 0.0))
        if run + 1 in RUNS:
            rows.append(delta_row(run + 1, RUNS[run + 1].format(cut_a=cut_a), STD, 0.4))
    rows.append(delta_row(LAST, "kf p 102", STD, 0.3))
    imported: dict[str, Any] = {
        "profile": "p1",
        "filename": "run.csv",
        "content": export(rows),
        "name": "S1",
        "instrument": "test MC",
        "element": "Ca",
        "bracketing_standard": "STD-X",
    }
    session = sessions.import_session(db, "tech", imported).item.id
    return Lab(session, cut_a, cut_b, sr_cut, c)


def run(db: Database, session: str, order: int) -> Measurement:
    with db.read_session() as sql:
        return sql.scalars(
            select(Measurement).where(
                Measurement.run_order == order,
                Measurement.session.has(name="S1"),
            )
        ).one()


def events(db: Database, action: str) -> list[CustodyEvent]:
    with db.read_session() as sql:
        return list(sql.scalars(select(CustodyEvent).where(CustodyEvent.action == action)))


def result_rows(db: Database) -> int:
    with db.read_session() as sql:
        return sql.scalar(select(func.count()).select_from(Result)) or 0


def test_a_row_matched_by_hand_is_reduced_with_the_cut(db: Database) -> None:
    b = lab(db)
    first = reduction.reduce_session(db, "tech", {"session": b.session}).item
    line = next(x for x in first.results if x.target == b.cut_a and x.ratio == "44/40")
    assert line.n == 1
    stored = result_rows(db)
    done = run_matching.match_row(
        db, "tech", {"session": b.session, "run_order": 4, "target": b.cut_a}
    )
    assert done.item.matched.target == b.cut_a and done.item.matched.role == "sample"
    matched = run(db, b.session, 4)
    assert matched.role is MeasurementRole.SAMPLE and matched.cut_id is not None
    assert [e.seq for e in events(db, "session.row_matched")] == [done.event_seq]
    again = reduction.reduce_session(db, "tech", {"session": b.session}).item
    line = next(x for x in again.results if x.target == b.cut_a and x.ratio == "44/40")
    # by hand: both runs sit 0.4 ‰ above a constant standard, so the mean is 0.4 of n = 2
    assert line.n == 2 and line.value == pytest.approx(0.4, abs=1e-9)
    assert result_rows(db) == stored  # the cut's results are computed again in place


def test_a_catalogue_number_or_an_aliquot_names_the_one_cut(db: Database) -> None:
    b = lab(db)
    answer = run_matching.match_row(
        db, "tech", {"session": b.session, "run_order": 4, "target": "kf p 102"}
    ).item
    assert answer.matched.target == b.cut_b and "KF P 102" in answer.matched.label
    replicate = run_matching.match_row(
        db, "tech", {"session": b.session, "run_order": 6, "target": b.cut_a}
    ).item
    assert replicate.matched.target == b.cut_a  # a replicate of run 2's cut: normal


def test_a_row_may_be_the_bracketing_standard(db: Database) -> None:
    b = lab(db)
    answer = run_matching.match_row(
        db, "tech", {"session": b.session, "run_order": 4, "target": "std-x"}
    ).item
    assert answer.matched.role == "standard" and answer.matched.target is None


@pytest.mark.parametrize(
    ("order", "target", "error", "fragment"),
    [
        (2, "{cut_b}", RuleViolation, "matched already, as a run of cut {cut_a}"),
        (3, "{cut_b}", RuleViolation, "matched already, as the bracketing standard"),
        (4, "{sr_cut}", RuleViolation, "Sr batch"),
        (4, format_id(Kind.CUT, 9999), NotFound, "no cut has this ID"),
        (4, "KF P 999", NotFound, "no specimen"),
        (4, "{specimen_c}", RuleViolation, "has 2 Ca cuts"),
        (4, "dup 1", InputError, "several"),
        (99, "{cut_a}", NotFound, "no such run"),
        (LAST, "{cut_a}", RuleViolation, "no bracketing standard measured after it"),
    ],
)
def test_refusals_write_nothing(
    db: Database,
    counts: Counts,
    order: int,
    target: str,
    error: type[Exception],
    fragment: str,
) -> None:
    b = lab(db)
    ids = {"cut_a": b.cut_a, "cut_b": b.cut_b, "sr_cut": b.sr_cut, "specimen_c": b.specimen_c}
    before = counts()
    request = {"session": b.session, "run_order": order, "target": target.format(**ids)}
    with pytest.raises(error, match=fragment.format(**ids)):
        run_matching.match_row(db, "tech", request)
    assert counts() == before
    assert run(db, b.session, 4).role is MeasurementRole.UNMATCHED


def test_rows_named_by_catalogue_number_are_matched_the_rest_listed(db: Database) -> None:
    b = lab(db)
    with db.read_session() as sql:
        unmatched_before = sql.scalar(
            select(func.count()).where(Measurement.role == MeasurementRole.UNMATCHED)
        )
    done = run_matching.match_by_name(db, "tech", {"session": b.session})
    matched = {m.run_order: m.target for m in done.item.matched}
    assert matched == {6: b.cut_a, 8: b.cut_b}
    left = {row.run_order: row.reason for row in done.item.unmatched}
    assert set(left) == {4, 10, 12, LAST}  # nothing dropped: every other row is listed
    assert "no specimen's catalogue number" in left[4]
    assert "2 Ca cuts" in left[10]
    assert "several specimens" in left[12]
    assert "no bracketing standard measured after it" in left[LAST]
    assert len(matched) + len(left) == unmatched_before
    assert [e.seq for e in events(db, "session.rows_matched")] == [done.event_seq]
    assert run(db, b.session, 8).role is MeasurementRole.SAMPLE
    assert run(db, b.session, LAST).role is MeasurementRole.UNMATCHED
    answer = reduction.reduce_session(db, "tech", {"session": b.session}).item
    assert {x.n for x in answer.results if x.target == b.cut_a} == {2}
    assert {x.n for x in answer.results if x.target == b.cut_b} == {1}


def test_nothing_left_to_match_by_name_writes_nothing(db: Database, counts: Counts) -> None:
    b = lab(db)
    run_matching.match_by_name(db, "tech", {"session": b.session})
    before = counts()
    with pytest.raises(RuleViolation, match="no unmatched row could be matched: run 4"):
        run_matching.match_by_name(db, "tech", {"session": b.session})
    assert counts() == before


def test_the_session_says_why_and_when_its_results_are_stale(db: Database) -> None:
    b = lab(db)
    reduction.reduce_session(db, "tech", {"session": b.session})
    assert not session_detail.session_detail(db, b.session).matched_since_reduced
    run_matching.match_by_name(db, "tech", {"session": b.session})
    detail = session_detail.session_detail(db, b.session)
    assert detail.matched_since_reduced
    reasons = {u.run_order: u.reason for u in detail.unmatched}
    assert set(reasons) == {4, 10, 12, LAST} and "2 Ca cuts" in reasons[10]
    reduction.reduce_session(db, "tech", {"session": b.session})
    assert not session_detail.session_detail(db, b.session).matched_since_reduced
