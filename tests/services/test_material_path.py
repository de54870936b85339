"""The lineage path through the services, on SQLite and PostgreSQL: happy paths and refusals."""

from __future__ import annotations

import math
from decimal import Decimal

import pytest
from sqlalchemy import select

from tests import factories as make
from tests.conftest import Counts
from tracker.db.database import Database
from tracker.domain.errors import InputError, NotFound, RuleViolation
from tracker.domain.models import ContainerStatus, CustodyEvent, Powder, SpecimenStatus
from tracker.services.bench import chemistry, custody, drilling, solutions
from tracker.services.ledger.chain import verify
from tracker.services.loans import specimens
from tracker.services.read import lineage
from tracker.services.read.item_facts import SolutionFacts


def last_event(db: Database) -> CustodyEvent:
    with db.read_session() as session:
        event = session.scalars(select(CustodyEvent).order_by(CustodyEvent.seq.desc())).first()
        assert event is not None
        return event


def test_each_action_appends_exactly_one_event(db: Database, counts: Counts) -> None:
    loan = make.loan(db)
    before = counts()["ledger_head"]
    spec = make.specimen(db, loan, checked_in=False)
    assert counts()["ledger_head"] == before + 1
    specimens.check_in(db, "tech", {"specimen": spec, "condition": "ok"})
    assert counts()["ledger_head"] == before + 2
    event = last_event(db)
    assert (event.action, event.object_ref, event.operator) == ("specimen.checked_in", spec, "tech")
    assert verify(db).ok


def test_drill_records_mass_by_difference_with_gum_uncertainty(db: Database) -> None:
    spec = make.specimen(db, make.loan(db))
    answer = drilling.drill(
        db,
        "tech",
        {"specimen": spec, "tissue": "Enamel", "tare": "1234.567 mg", "gross": "1.236717 g"},
    )
    assert answer.item.mass_mg == pytest.approx(2.150, abs=1e-12)
    # GUM (JCGM 100:2008) F.2.2.1: one reading of a balance with readability d has
    # u = d/sqrt(12); a difference of two readings has u = d/sqrt(6).
    assert answer.item.mass_u_mg == pytest.approx(0.001 / math.sqrt(6), rel=1e-12)
    assert answer.item.tissue == "enamel"
    assert last_event(db).parent_ref == spec


@pytest.mark.parametrize(
    ("field", "value", "fragment"),
    [
        ("gross", "1233.000 mg", "not heavier than the tare"),
        ("tare", "-1 mg", "greater than zero"),
        ("gross", "0 mg", "greater than zero"),
        ("gross", "1236.7171 mg", "more decimals than the balance reads"),
        ("gross", "2 kgz", "unknown mass unit"),
        ("gross", "heavy", "is not a number"),
        ("gross", "1236.717", "has no unit"),
    ],
)
def test_bad_weighings_are_refused_and_nothing_written(
    db: Database, counts: Counts, field: str, value: str, fragment: str
) -> None:
    spec = make.specimen(db, make.loan(db))
    request = {"specimen": spec, "tissue": "enamel", "tare": "1234.567 mg", "gross": "1236.717 mg"}
    before = counts()
    with pytest.raises(InputError) as caught:
        drilling.drill(db, "tech", request | {field: value})
    assert caught.value.field == field
    assert fragment in caught.value.reason
    assert value.split()[0] in caught.value.one_line() or value in caught.value.one_line()
    assert counts() == before


def test_drill_needs_a_specimen_on_hand(db: Database, counts: Counts) -> None:
    spec = make.specimen(db, make.loan(db), checked_in=False)
    before = counts()
    with pytest.raises(RuleViolation, match="not on hand"):
        make.powder(db, spec)
    assert counts() == before


def test_unknown_and_mistyped_ids_are_input_errors(db: Database, counts: Counts) -> None:
    spec = make.specimen(db, make.loan(db))
    before = counts()
    wrong_check = spec[:-1] + ("A" if spec[-1] != "A" else "B")
    for bad in (wrong_check, "SP-99999-", "XX-00001-0", "PW-00001-5"):
        with pytest.raises(InputError):
            drilling.drill(
                db,
                "tech",
                {"specimen": bad, "tissue": "enamel", "tare": "1.000 mg", "gross": "2.000 mg"},
            )
    with pytest.raises(NotFound, match="no specimen"):
        specimens.check_in(
            db, "tech", {"specimen": "SP-09999-" + _check("SP09999"), "condition": "x"}
        )
    assert counts() == before


def _check(body: str) -> str:
    from tracker.domain.ids import check_character

    return check_character(body)


def test_scanned_id_in_lower_case_without_hyphens_is_accepted(db: Database) -> None:
    spec = make.specimen(db, make.loan(db), checked_in=False)
    scanned = spec.replace("-", "").lower()
    answer = specimens.check_in(db, "tech", {"specimen": scanned, "condition": "ok"})
    assert answer.item.id == spec


def test_checking_in_twice_is_refused(db: Database, counts: Counts) -> None:
    spec = make.specimen(db, make.loan(db))
    before = counts()
    with pytest.raises(RuleViolation, match="checked in twice"):
        specimens.check_in(db, "tech", {"specimen": spec, "condition": "again"})
    assert counts() == before


def test_future_action_time_is_refused(db: Database, counts: Counts) -> None:
    spec = make.specimen(db, make.loan(db), checked_in=False)
    before = counts()
    with pytest.raises(InputError) as caught:
        specimens.check_in(
            db, "tech", {"specimen": spec, "condition": "ok", "received_at": "2099-01-01T00:00:00Z"}
        )
    assert caught.value.field == "received-at" and "future" in caught.value.reason
    assert counts() == before


def test_dissolving_part_then_the_rest_consumes_the_powder(db: Database) -> None:
    powder = make.powder(db, make.specimen(db, make.loan(db)), mg="2.000")
    first = solutions.dissolve(
        db,
        "tech",
        {
            "powder": powder,
            "acid": "2 M HNO3",
            "powder_taken": "1.200 mg",
            "vial_tare": "5.0000 g",
            "vial_gross": "6.0000 g",
        },
    )
    assert first.item.powder_mass_mg == pytest.approx(1.2)
    second = make.solution(db, powder)
    with db.read_session() as session:
        row = session.scalars(select(Powder)).one()
        assert row.status is ContainerStatus.CONSUMED
    detail = lineage.show_item(db, powder)
    assert [c.id for c in detail.item.children] == [first.item.id, second]
    solution = detail.item.children[1].facts
    assert isinstance(solution, SolutionFacts)
    assert solution.powder_mass_mg == Decimal("0.8")  # 2.0 - 1.2


def test_child_larger_than_parent_is_refused(db: Database, counts: Counts) -> None:
    powder = make.powder(db, make.specimen(db, make.loan(db)), mg="2.000")
    before = counts()
    with pytest.raises(RuleViolation, match="more than remains"):
        solutions.dissolve(
            db,
            "tech",
            {
                "powder": powder,
                "acid": "HNO3",
                "powder_taken": "2.100 mg",
                "vial_tare": "5.0000 g",
                "vial_gross": "6.0000 g",
            },
        )
    assert counts() == before
    solution = make.solution(db, powder, grams="1.0000")
    make.aliquot(db, solution, grams="0.6000")
    before = counts()
    with pytest.raises(RuleViolation, match="more than remains"):
        make.aliquot(db, solution, grams="0.5000")
    assert counts() == before


def test_rounding_at_the_last_digit_is_not_an_overdraw(db: Database) -> None:
    """Taking 2.001 mg of a 2.000 mg powder is within the balances' uncertainty (k = 2)."""
    powder = make.powder(db, make.specimen(db, make.loan(db)), mg="2.000")
    make.solution(db, powder, taken="2.001 mg")


def test_element_amounts_follow_the_concentration(db: Database) -> None:
    # 3 mg of enamel powder: 1000 ug of Ca in it is possible (33 %; hydroxyapatite is 39.9 %)
    powder = make.powder(db, make.specimen(db, make.loan(db)), mg="3.000")
    solution = make.solution(db, powder, grams="2.0000")
    answer = solutions.record_concentration(
        db,
        "tech",
        {"solution": solution, "element": "Ca", "value": "0.5 mg/g", "uncertainty": "5 ug/g"},
    )
    assert answer.item.value_ug_per_g == pytest.approx(500)
    # Element mass = solution mass x mass fraction; u from GUM root-sum-square of relative
    # uncertainties (JCGM 100:2008 eq. 12 for a product), worked by hand here.
    u_mass = 0.1e-3 / math.sqrt(6)
    expected_u = 1000 * math.hypot(u_mass / 2.0, 5 / 500)
    assert answer.item.element_ug == pytest.approx(1000)
    assert answer.item.element_u_ug == pytest.approx(expected_u, rel=1e-9)
    aliquot = solutions.take_aliquot(
        db, "tech", {"solution": solution, "tare": "2.0000 g", "gross": "2.2000 g"}
    )
    assert aliquot.item.element_ug == pytest.approx(100)


def test_concentration_needs_unit_and_one_uncertainty(db: Database, counts: Counts) -> None:
    solution = make.solution(db, make.powder(db, make.specimen(db, make.loan(db))))
    before = counts()
    for request in (
        {"value": "800"},
        {"value": "800 mg/L", "uncertainty": "1 ug/g"},
        {"value": "800 ug/g"},
        {"value": "800 ug/g", "element": "CA", "uncertainty": "1 ug/g"},
    ):
        with pytest.raises(InputError):
            solutions.record_concentration(
                db, "tech", {"solution": solution, "element": "Ca"} | request
            )
    assert counts() == before


def test_column_batch_positions(db: Database) -> None:
    solution = make.solution(db, make.powder(db, make.specimen(db, make.loan(db))))
    make.concentration(db, solution)
    aliquot = make.aliquot(db, solution)
    chemistry.add_reference_material(db, "boss", {"name": "Carbonate RM X", "element": "Ca"})
    batch = make.batch(db)
    sample = chemistry.add_position(
        db, "tech", {"batch": batch, "kind": "sample", "aliquot": aliquot}
    )
    blank = chemistry.add_position(db, "tech", {"batch": batch, "kind": "blank"})
    ref = chemistry.add_position(
        db,
        "tech",
        {
            "batch": batch,
            "kind": "reference",
            "reference_material": "carbonate rm x",
            "loaded_ug": 5,
        },
    )
    assert [p.item.slot for p in (sample, blank, ref)] == [1, 2, 3]
    assert sample.item.loaded_ug == pytest.approx(80.0)
    with pytest.raises(RuleViolation, match="already used"):
        chemistry.add_position(db, "tech", {"batch": batch, "kind": "sample", "aliquot": aliquot})
    with pytest.raises(InputError, match="takes no aliquot"):
        chemistry.add_position(db, "tech", {"batch": batch, "kind": "blank", "aliquot": aliquot})


def test_move_and_return_track_location(db: Database, counts: Counts) -> None:
    box = make.location(db)
    spec = make.specimen(db, make.loan(db))
    moved = custody.move(db, "tech", {"item": spec, "to": box})
    assert moved.item.location and moved.item.location.endswith("Box 1")
    before = counts()
    with pytest.raises(RuleViolation, match="already there"):
        custody.move(db, "tech", {"item": spec, "to": box})
    assert counts() == before
    returned = specimens.return_specimen(db, "boss", {"specimen": spec, "condition": "as received"})
    assert returned.item.status == SpecimenStatus.RETURNED.value
    with pytest.raises(RuleViolation, match="not in the lab"):
        custody.move(db, "tech", {"item": spec, "to": box})


def test_loan_return_needs_everything_back(db: Database) -> None:
    loan = make.loan(db)
    spec = make.specimen(db, loan)
    powder = make.powder(db, spec)
    with pytest.raises(RuleViolation, match="still on hand"):
        custody.mark_loan_returned(db, "boss", {"loan": loan})
    specimens.return_specimen(db, "boss", {"specimen": spec, "condition": "as received"})
    with pytest.raises(RuleViolation, match="powder vial"):
        custody.mark_loan_returned(db, "boss", {"loan": loan})
    with pytest.raises(RuleViolation, match="written permission"):
        custody.dispose(db, "boss", {"item": powder, "outcome": "retained", "reason": "archive"})
    custody.dispose(db, "boss", {"item": powder, "outcome": "returned", "reason": "unused"})
    answer = custody.mark_loan_returned(db, "boss", {"loan": loan})
    assert answer.item.status == "returned"
    with pytest.raises(RuleViolation, match="no new specimens"):
        make.specimen(db, loan)
