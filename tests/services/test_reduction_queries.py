"""A session's reduction, and its stored detail, read a fixed number of statements however
many targets it measured: no query per cut, specimen, reference material or accepted value,
and the neighbouring standards of each run are found by search (both backends)."""

from __future__ import annotations

from tests import factories as make
from tests.services.test_instrument import STD, bench, delta_row, do_import, export
from tests.services.test_scan_queries import counted
from tracker.db.database import Database
from tracker.services.bench import chemistry, columns
from tracker.services.instrument import reduction, results, session_detail

RM_DELTA = 0.70  # the reference material measured at its accepted value
ACCEPTED = {"ratio": "44/40", "scale": "STD-X", "value": RM_DELTA, "two_sd": 0.10}


def _more_cuts(db: Database, batch: str, count: int) -> list[str]:
    """``count`` further sample columns on the batch, each from its own specimen."""
    loan = make.loan(db)
    cuts = []
    for _ in range(count):
        solution = make.solution(db, make.powder(db, make.specimen(db, loan)))
        make.concentration(db, solution, "500 ug/g")
        aliquot = make.aliquot(db, solution, grams="0.0200")
        request = {"batch": batch, "kind": "sample", "aliquot": aliquot}
        position = chemistry.add_position(db, "tech", request).item.id
        recorded = {"position": position, "cut": "Ca", "recovered": "9.500 ug"}
        cuts.append(columns.record_cut(db, "tech", recorded).item.id)
    return cuts


def _session(db: Database, cuts: list[str], name: str) -> str:
    """Each cut measured twice and the reference material once, every run bracketed."""
    rows, run = [delta_row(1, "STD-X", STD, 0.0)], 1
    for index, target in enumerate([*cuts, *cuts, "RM-A"]):
        delta = RM_DELTA if target == "RM-A" else 0.4 + index / 100
        rows += [
            delta_row(run + 1, target, STD, delta),
            delta_row(run + 2, "STD-X", STD, 0.0),
        ]
        run += 2
    return do_import(db, export(rows), name=name)


def _selects(statements: list[str]) -> int:
    return sum(s.lstrip().upper().startswith("SELECT") for s in statements)


def test_reduction_and_detail_read_a_fixed_number_of_statements(db: Database) -> None:
    lab = bench(db)
    source = {"source": "invented for the test", "reference": "RM-A"}
    results.set_reference_value(db, "boss", ACCEPTED | source)
    few = [lab.cut, *_more_cuts(db, lab.batch, 1)]
    many = [*few, *_more_cuts(db, lab.batch, 6)]
    small, large = _session(db, few, "few"), _session(db, many, "many")
    reads: dict[str, list[int]] = {"reduce": [], "detail": []}
    for session in (small, large):
        reduction.reduce_session(db, "tech", {"session": session})  # the pool's connections made
        with counted(db) as statements:  # reduced again: the same results, written in place
            answer = reduction.reduce_session(db, "tech", {"session": session}).item
        reads["reduce"].append(_selects(statements))
        with counted(db) as statements:
            detail = session_detail.session_detail(db, session)
        reads["detail"].append(_selects(statements))
        targets = {line.target for line in answer.results if line.kind == "sample"}
        assert targets == set(few if session == small else many)
        judged = [x.passed for x in detail.results if x.label == "RM-A" and x.ratio == "44/40"]
        assert judged == [True]  # its accepted value was found for the detail too
    assert reads["reduce"][0] == reads["reduce"][1], reads  # nothing read per target
    assert reads["detail"][0] == reads["detail"][1], reads


def test_results_on_another_scale_read_a_fixed_number_of_statements(db: Database) -> None:
    lab = bench(db)
    for ratio in ("44/40", "44/42"):  # RM-A's accepted δ on the session's scale
        on_std = {"ratio": ratio, "scale": "STD-X", "value": 0.7, "two_sd": 0.1}
        results.set_reference_value(db, "boss", on_std | {"reference": "RM-A", "source": "made up"})
    cuts = [lab.cut, *_more_cuts(db, lab.batch, 6)]
    reads, counts = [], []
    for name, measured in (("few", cuts[:2]), ("many", cuts)):
        reduction.reduce_session(db, "tech", {"session": _session(db, measured, name)})
        results.results(db, scale="RM-A")  # the pool's connections made
        with counted(db) as statements:
            converted = results.results(db, scale="RM-A")
        reads.append(_selects(statements))
        counts.append(len(converted))
        assert {line.scale for line in converted} == {"RM-A"}
    assert counts[1] > counts[0] and reads[0] == reads[1], (counts, reads)
