"""Corrections, never edits: both values in history, the latest in every total (both backends)."""

from __future__ import annotations

import math
from decimal import Decimal

import pytest
from sqlalchemy import select

from tests import factories as make
from tests import keys
from tests.conftest import Counts
from tests.services.test_instrument import STD, bench, delta_row, do_import, export
from tracker.db.database import Database
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.ids import parse_id
from tracker.domain.models import Correction, Result
from tracker.services.admin import setup
from tracker.services.bench import columns, solutions
from tracker.services.corrections import correcting, measured_values, weighings
from tracker.services.instrument import reduction, results
from tracker.services.ledger import chain
from tracker.services.read import lineage, reconcile
from tracker.services.read.item_facts import PowderFacts, SolutionFacts

WHY = "gross read from the wrong line of the balance log"


def weigh_again(db: Database, actor: str, item: str, tare: str, gross: str) -> Correction:
    weighings.correct_weighing(
        db, actor, {"item": item, "tare": tare, "gross": gross, "reason": WHY}
    )
    with db.read_session() as session:
        return session.scalars(select(Correction).order_by(Correction.id.desc()).limit(1)).one()


def test_powder_correction_keeps_the_original_and_totals_use_the_latest(db: Database) -> None:
    loan = make.loan(db)
    powder = make.powder(db, make.specimen(db, loan), "2.000")
    answer = weighings.correct_weighing(
        db, "tech", {"item": powder, "tare": "1000.000 mg", "gross": "1002.500 mg", "reason": WHY}
    ).item
    # by hand: 1002.500 − 1000.000 = 2.500 mg, u = 0.001 mg/√6 (GUM F.2.2.1, two readings)
    assert answer.value["mass_mg"] == "2.500"  # the digits of the readings' difference
    assert float(answer.value["mass_u_mg"]) == pytest.approx(0.001 / math.sqrt(6))
    assert answer.replaced["mass_mg"] == "2.000" and answer.entry_by == "tech"

    (line,) = reconcile.reconcile(db, loan)
    assert line.drilled_mg == pytest.approx(2.5) and line.powder_on_hand_mg == pytest.approx(2.5)
    history = lineage.show_item(db, powder).history
    drilled = next(e for e in history if e.action == "powder.drilled")
    corrected = next(e for e in history if e.action == "powder.corrected")
    assert drilled.payload["mass_mg"] == "2.000"  # the original event, untouched
    assert corrected.payload["supersedes_event"] == drilled.seq
    assert (
        corrected.payload["reason"] == WHY and corrected.payload["value"]["gross_mg"] == "1002.500"
    )
    assert corrected.payload["effects"]["label"] == "queued"  # the vial's label shows its mass
    dissolved = solutions.dissolve(
        db,
        "tech",
        {"powder": powder, "acid": "2 M HNO3", "vial_tare": "5.0000 g", "vial_gross": "6.0000 g"},
    ).item
    assert dissolved.powder_mass_mg == pytest.approx(2.5)  # "all that remains" is the latest
    assert chain.verify(db).ok


def test_another_operators_entry_needs_a_manager_and_the_refusal_says_so(
    db: Database, counts: Counts
) -> None:
    setup.add_operator(db, "boss", keys.person("tova", "Tova Lind"))
    powder = make.powder(db, make.specimen(db, make.loan(db)), "2.000")
    before = counts()
    with pytest.raises(RuleViolation) as caught:
        weigh_again(db, "tova", powder, "1000.000 mg", "1002.100 mg")
    assert caught.value.field == "operator" and caught.value.value == "tova"
    assert caught.value.reason == (
        "correcting powder mass recorded by tech needs an operator with the manager role "
        "(tova is a technician); ask a manager (boss) to do it"
    )
    assert counts() == before
    first = weigh_again(db, "boss", powder, "1000.000 mg", "1002.100 mg")
    assert (first.entry_by, first.recorded_by) == ("tech", "boss")
    with pytest.raises(RuleViolation, match="recorded by boss needs an operator with the manager"):
        weigh_again(db, "tech", powder, "1000.000 mg", "1002.200 mg")  # now the value is boss's


def test_a_second_correction_supersedes_the_first(db: Database) -> None:
    powder = make.powder(db, make.specimen(db, make.loan(db)), "2.000")
    first = weigh_again(db, "tech", powder, "1000.000 mg", "1002.300 mg")
    second = weigh_again(db, "tech", powder, "1000.000 mg", "1002.030 mg")
    assert second.supersedes_id == first.id and second.supersedes_event_seq == first.event_seq
    assert second.replaced["mass_mg"] == "2.300"
    listed = correcting.list_corrections(db, powder.lower().replace("-", ""))  # as scanned
    assert [c.event_seq for c in listed] == [first.event_seq, second.event_seq]
    facts = lineage.show_item(db, powder).item.facts
    assert isinstance(facts, PowderFacts) and facts.mass_mg == Decimal("2.030")


def test_a_powder_cannot_be_corrected_below_what_was_dissolved(
    db: Database, counts: Counts
) -> None:
    powder = make.powder(db, make.specimen(db, make.loan(db)), "2.000")
    make.solution(db, powder, taken="1.500 mg")
    before = counts()
    with pytest.raises(RuleViolation, match=r"less than the 1.500 mg already dissolved"):
        weigh_again(db, "tech", powder, "1000.000 mg", "1001.200 mg")
    assert counts() == before


def test_a_correction_over_the_loan_limit_needs_a_manager_and_is_flagged(
    db: Database, counts: Counts
) -> None:
    loan = make.loan(db, max_mass_per_specimen="5 mg")
    powder = make.powder(db, make.specimen(db, loan), "4.000")
    before = counts()
    with pytest.raises(RuleViolation, match="takes the loan over a limit needs an operator"):
        weigh_again(db, "tech", powder, "1000.000 mg", "1005.600 mg")
    assert counts() == before
    row = weigh_again(db, "boss", powder, "1000.000 mg", "1005.600 mg")
    assert row.entry_by == "tech"
    (line,) = reconcile.reconcile(db, loan)
    assert {"over limit", "override used"} <= set(line.flags)
    event = lineage.show_item(db, powder).history[-1]
    assert "per-specimen limit 5 mg" in event.payload["effects"]["limits"][0]


def test_nothing_to_correct_is_refused(db: Database, counts: Counts) -> None:
    powder = make.powder(db, make.specimen(db, make.loan(db)), "2.000")
    before = counts()
    with pytest.raises(InputError, match="already holds"):
        weigh_again(db, "tech", powder, "1000.000 mg", "1002.000 mg")
    with pytest.raises(InputError) as caught:
        weigh_again(db, "tech", make.specimen(db, make.loan(db)), "1 mg", "2 mg")
    assert caught.value.field == "item"
    assert counts()["correction"] == before["correction"]


def _reduced_line(db: Database, session: str, cut: str) -> reduction.ResultLine:
    answer = reduction.reduce_session(db, "tech", {"session": session}).item
    return next(r for r in answer.results if r.target == cut and r.ratio == "44/40")


def _session(db: Database, cut: str) -> str:
    rows = [delta_row(1, "STD-X", STD, 0.0), delta_row(2, cut, STD, 0.5)]
    rows += [delta_row(3, "STD-X", STD, 0.0), delta_row(4, cut, STD, 0.5)]
    return do_import(db, export([*rows, delta_row(5, "STD-X", STD, 0.0)]))


def test_a_concentration_correction_reaches_loads_yields_and_results(db: Database) -> None:
    b = bench(db)  # 0.0200 g aliquot × 500 µg/g = 10 µg loaded, 9.000 µg recovered: 90 %
    session = _session(db, b.cut)
    assert "low yield" in _reduced_line(db, session, b.cut).flags
    sample = next(p for p in columns.summarize_batch(db, b.batch).positions if p.kind == "sample")
    solution = lineage.show_item(db, sample.holds or "").ancestors[-1].id

    answer = measured_values.correct_concentration(
        db,
        "tech",
        {
            "solution": solution,
            "element": "Ca",
            "value": "450 ug/g",
            "relative_uncertainty_percent": 2,
            "reason": "dilution applied twice",
        },
    ).item
    # by hand: 0.0200 g × 450 µg/g = 9.000 µg loaded; 9.000 / 9.000 = 100 % yield
    assert answer.effects["loaded"][0]["loaded_ug"] == [pytest.approx(10.0), pytest.approx(9.0)]
    assert answer.effects["sessions_reduced"] == [session]
    sample = next(p for p in columns.summarize_batch(db, b.batch).positions if p.kind == "sample")
    assert sample.yield_fraction == pytest.approx(1.0) and "low yield" not in sample.flags
    stored = reduction_rows(db, session)
    assert stored and not any("low yield" in flags for flags in stored)
    facts = lineage.show_item(db, solution).item.facts
    assert isinstance(facts, SolutionFacts)
    assert facts.elements["Ca"].ug == pytest.approx(1.0 * 450)  # 1.0000 g × 450 µg/g
    # a later measurement still takes precedence over the corrected earlier one
    later = {"value": "470 ug/g", "relative_uncertainty_percent": 2}
    solutions.record_concentration(db, "tech", {"solution": solution, "element": "Ca", **later})
    facts = lineage.show_item(db, solution).item.facts
    assert isinstance(facts, SolutionFacts) and facts.elements["Ca"].ug == pytest.approx(470.0)


def reduction_rows(db: Database, session: str) -> list[list[str]]:
    """The flags of a session's stored results (what `tracker results` reads)."""
    number = parse_id(session).number
    with db.read_session() as sql:
        rows = sql.scalars(select(Result).where(Result.session_id == number))
        return [list(r.flags) for r in rows]


def test_a_blank_recovery_correction_redoes_the_blank_correction(db: Database) -> None:
    b = bench(db)
    columns.set_blank_delta(db, "tech", {"batch": b.batch, "ratio": "44/40", "delta_permil": -2.0})
    session = _session(db, b.cut)
    _reduced_line(db, session, b.cut)
    blank_cut = next(
        n.id for n in lineage.show_item(db, b.blank_position).item.children if n.kind == "cut"
    )
    measured_values.correct_recovery(
        db,
        "tech",
        {"cut": blank_cut, "recovered": "0.100 ug", "reason": "blank read at 2x dilution"},
    )
    (value,) = [r.value for r in results.results(db) if r.cut == b.cut and r.ratio == "44/40"]
    # mass balance by hand with the corrected 100 ng blank at −2.0 ‰ in 9000 ng recovered
    assert value == pytest.approx((0.5 * 9000 - (-2.0) * 100) / (9000 - 100), abs=1e-9)


def test_an_aliquot_correction_moves_its_load_and_the_solution_books(db: Database) -> None:
    b = bench(db)
    sample = next(p for p in columns.summarize_batch(db, b.batch).positions if p.kind == "sample")
    aliquot = sample.holds or ""
    answer = weighings.correct_weighing(
        db, "tech", {"item": aliquot, "tare": "2.0000 g", "gross": "2.0180 g", "reason": WHY}
    ).item
    # by hand: 0.0180 g × 500 µg/g = 9.000 µg
    assert answer.effects["loaded"][0]["loaded_ug"][1] == pytest.approx(9.0)
    solution = lineage.show_item(db, aliquot).ancestors[-1].id
    facts = lineage.show_item(db, solution).item.facts
    assert isinstance(facts, SolutionFacts) and facts.remaining_g == pytest.approx(1.0 - 0.018)


def test_a_solution_cannot_be_corrected_below_its_aliquots(db: Database, counts: Counts) -> None:
    solution = make.solution(db, make.powder(db, make.specimen(db, make.loan(db))))
    make.aliquot(db, solution, grams="0.4000")
    before = counts()
    with pytest.raises(RuleViolation, match=r"less than the 0.40000 g already aliquoted"):
        weigh_again(db, "tech", solution, "5.0000 g", "5.3000 g")
    assert counts() == before
    row = weigh_again(db, "tech", solution, "5.0000 g", "5.9000 g")
    assert Decimal(row.value["mass_g"]) == Decimal("0.9")  # its digits, in g


def test_the_powder_portion_of_a_solution_is_corrected_within_the_powder(
    db: Database, counts: Counts
) -> None:
    powder = make.powder(db, make.specimen(db, make.loan(db)), "2.000")
    solution = make.solution(db, powder, taken="1.200 mg")
    before = counts()
    with pytest.raises(RuleViolation, match=r"less than the 2.100 mg taken"):
        weighings.correct_powder_taken(
            db, "tech", {"solution": solution, "powder_taken": "2.100 mg", "reason": WHY}
        )
    assert counts() == before
    weighings.correct_powder_taken(
        db, "tech", {"solution": solution, "powder_taken": "1.020 mg", "reason": WHY}
    )
    facts = lineage.show_item(db, powder).item.facts
    assert isinstance(facts, PowderFacts) and facts.remaining_mg == pytest.approx(2.0 - 1.02)


def test_a_weighing_correction_reads_the_balance_the_item_was_weighed_on(db: Database) -> None:
    solution = make.solution(db, make.powder(db, make.specimen(db, make.loan(db))))
    aliquot = solutions.take_aliquot(
        db,
        "tech",
        {"solution": solution, "tare": "2.00000 g", "gross": "2.02500 g", "readability": "0.01 mg"},
    ).item.id
    row = weigh_again(db, "tech", aliquot, "2.00000 g", "2.02405 g")  # finer than 0.1 mg
    # by difference of two readings on a 0.01 mg balance: u = d / sqrt(6) (GUM F.2.2.1, each
    # reading's rounding a rectangular distribution of half-width d/2, common practice)
    assert float(row.value["mass_u_g"]) == pytest.approx(0.01e-3 / math.sqrt(6), rel=1e-6)
    told = weighings.correct_weighing(
        db,
        "tech",
        {
            "item": aliquot,
            "tare": "2.0000 g",
            "gross": "2.0230 g",
            "readability": "0.1 mg",
            "reason": WHY,
        },
    ).item
    assert told is not None  # a readability given is used as given
    with db.read_session() as session:
        latest = session.scalars(select(Correction).order_by(Correction.id.desc()).limit(1)).one()
    assert float(latest.value["mass_u_g"]) == pytest.approx(0.1e-3 / math.sqrt(6), rel=1e-6)
