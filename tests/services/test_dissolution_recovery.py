"""Dissolution recovery and the plausibility of a concentration, on SQLite and PostgreSQL.

Expected values are worked here from the inputs, never copied from tracker's output: the
Ca mass fraction of hydroxyapatite from periodictable 2.1 (the CIAAW 2021 abridged
standard atomic weights), and first-order propagation of independent relative
uncertainties by hand.
"""

from __future__ import annotations

import json
import math

import periodictable
import pytest
from sqlalchemy import select

from tests import factories as make
from tests.conftest import snapshot_counts
from tracker.db.database import Database
from tracker.domain.errors import RuleViolation
from tracker.domain.models import Correction, CustodyEvent
from tracker.services.admin import recovery_window
from tracker.services.bench import drilling, solutions
from tracker.services.corrections import measured_values
from tracker.services.read import lineage, reports
from tracker.services.read.item_facts import AliquotFacts, SolutionFacts

# periodictable 2.1 (CIAAW 2021 abridged standard atomic weights): w(Ca) in Ca10(PO4)6(OH)2
HAP_CA = periodictable.formula("Ca10(PO4)6(OH)2").mass_fraction[periodictable.Ca]


def _solution(db: Database, material: str | None, powder_mg: str, grams: str) -> str:
    """A solution of all of a powder drilled from enamel as ``material`` (None: the tissue's
    default, enamel bioapatite)."""
    spec = make.specimen(db, make.loan(db))
    request = {"specimen": spec, "tissue": "enamel", "tare": "1000.000 mg"}
    request["gross"] = f"{1000 + float(powder_mg):.3f} mg"
    if material is not None:
        request["material"] = material
    powder = drilling.drill(db, "tech", request).item.id
    return make.solution(db, powder, grams)


def _record(db: Database, solution: str, value: str, **extra: object) -> None:
    request: dict[str, object] = {"solution": solution, "element": "Ca", "value": value}
    request |= {"relative_uncertainty_percent": 2} | extra
    solutions.record_concentration(db, "tech", request)


def _facts(db: Database, ref: str) -> SolutionFacts:
    facts = lineage.show_item(db, ref).item.facts
    assert isinstance(facts, SolutionFacts)
    return facts


def _expected(facts: SolutionFacts, ug_per_g: float, rel_u: float) -> tuple[float, float]:
    """Recovery of a hydroxyapatite powder and its standard uncertainty, by hand."""
    element_ug = ug_per_g * float(facts.solution_mass_g)
    value = element_ug / (1000 * float(facts.powder_mass_mg) * HAP_CA)
    relative = math.sqrt(
        rel_u**2
        + (float(facts.solution_mass_u_g) / float(facts.solution_mass_g)) ** 2
        + (float(facts.powder_mass_u_mg) / float(facts.powder_mass_mg)) ** 2
    )
    return value, value * relative


def test_recovery_of_a_stoichiometric_powder(db: Database) -> None:
    solution = _solution(db, "hydroxyapatite", "2.000", "1.0000")
    _record(db, solution, "790 ug/g")
    facts = _facts(db, solution)
    (found,) = facts.recoveries
    value, u = _expected(facts, 790, 0.02)
    assert (found.element, found.material) == ("Ca", "hydroxyapatite")
    assert found.low == found.high == pytest.approx(value, rel=1e-9)
    assert found.u_low == pytest.approx(u, rel=1e-6)
    assert not found.outside  # about 99 %, inside the default 90-110 %


def test_a_range_material_gives_a_range_flagged_only_when_wholly_outside(db: Database) -> None:
    # enamel bioapatite: 90-100 % of hydroxyapatite's Ca (the preset's stated range)
    inside = _solution(db, None, "2.000", "1.0000")
    _record(db, inside, "700 ug/g")  # 700/(2000 w) = 87.7 %, so 87.7-97.5 %: overlaps 90-110
    found = _facts(db, inside).recoveries[0]
    by_hand = 700 / (2000 * HAP_CA)
    assert found.low == pytest.approx(by_hand, rel=1e-9)
    assert found.high == pytest.approx(by_hand / 0.90, rel=1e-9)
    assert found.low < 0.90 < found.high and not found.outside
    below = _solution(db, None, "2.000", "1.0000")
    _record(db, below, "600 ug/g")  # 75.2-83.5 %: all of it below 90 %
    assert _facts(db, below).recoveries[0].outside


def test_the_lab_window_decides_the_flag(db: Database) -> None:
    solution = _solution(db, "hydroxyapatite", "2.000", "1.0000")
    _record(db, solution, "760 ug/g")  # 760/(2000 w) = 95.3 %
    assert not _facts(db, solution).recoveries[0].outside
    set_window = {"low_percent": 97, "high_percent": 103}
    with pytest.raises(RuleViolation):  # a technician may not set it
        recovery_window.set_recovery_window(db, "tech", set_window)
    answer = recovery_window.set_recovery_window(db, "boss", set_window)
    assert (answer.item.low_percent, answer.item.high_percent) == (97, 103)
    found = _facts(db, solution).recoveries[0]
    assert found.outside and (found.window_low, found.window_high) == (0.97, 1.03)
    assert recovery_window.show_recovery_window(db).default is False


def test_aliquots_and_the_return_report_carry_it(db: Database) -> None:
    solution = _solution(db, "hydroxyapatite", "2.000", "1.0000")
    _record(db, solution, "790 ug/g")
    aliquot = make.aliquot(db, solution, "0.1000")
    facts = lineage.show_item(db, aliquot).item.facts
    assert isinstance(facts, AliquotFacts)
    assert facts.elements["Ca"].ug == pytest.approx(790 * float(facts.mass_g), rel=1e-9)
    report = reports.build_return_report(db, _loan_of(db, solution))
    (line,) = [x for s in report.specimens for x in s.solutions]
    assert line.recoveries == _facts(db, solution).recoveries


def _loan_of(db: Database, solution: str) -> str:
    ancestors = lineage.show_item(db, solution).ancestors
    return next(a.id for a in ancestors if a.id.startswith("LN"))


def test_an_impossible_concentration_is_refused_and_nothing_written(db: Database) -> None:
    # 780 ug/g in 0.5 g: 390 ug Ca from 0.5 mg of powder, 78 % Ca; hydroxyapatite is 39.9 %
    solution = _solution(db, None, "0.500", "0.5000")
    before = snapshot_counts(db)
    with pytest.raises(RuleViolation) as refused:
        _record(db, solution, "780 ug/g")
    assert refused.value.field == "value"
    assert "780" in str(refused.value.value) and "likely a typo" in refused.value.reason
    assert "\n" not in str(refused.value)
    assert snapshot_counts(db) == before


def test_a_confirmed_impossible_concentration_is_recorded_as_confirmed(db: Database) -> None:
    solution = _solution(db, None, "0.500", "0.5000")
    _record(db, solution, "780 ug/g", confirm_implausible=True)
    with db.read_session() as session:
        event = session.scalars(select(CustodyEvent).order_by(CustodyEvent.seq.desc())).first()
        assert event is not None and event.action == "concentration.recorded"
        confirmed = json.loads(event.payload)["confirmed_implausible"]
    assert confirmed["element_ug"] == pytest.approx(390, rel=1e-9)
    # the most: hydroxyapatite's Ca at the top of the default window (110 %)
    assert confirmed["most_ug"] == pytest.approx(500 * HAP_CA * 1.10, rel=1e-9)
    assert _facts(db, solution).recoveries[0].outside


def test_a_possible_value_records_no_confirmation(db: Database) -> None:
    solution = _solution(db, None, "0.500", "0.5000")
    _record(db, solution, "390 ug/g", confirm_implausible=True)  # 39 % Ca: possible
    with db.read_session() as session:
        event = session.scalars(select(CustodyEvent).order_by(CustodyEvent.seq.desc())).first()
        assert event is not None
        assert "confirmed_implausible" not in json.loads(event.payload)


def test_a_recovery_inside_the_window_is_never_refused(db: Database) -> None:
    # 105 % of what stoichiometric hydroxyapatite holds: above its Ca, inside 90-110 %
    solution = _solution(db, "hydroxyapatite", "2.000", "1.0000")
    value = 1.05 * 2000 * HAP_CA
    _record(db, solution, f"{value:.1f} ug/g")
    (found,) = _facts(db, solution).recoveries
    assert found.low == pytest.approx(1.05, rel=1e-4) and not found.outside


def test_a_correction_to_an_impossible_value_needs_the_same_confirmation(db: Database) -> None:
    solution = _solution(db, "hydroxyapatite", "0.500", "0.5000")
    _record(db, solution, "390 ug/g")
    request = {
        "solution": solution,
        "element": "Ca",
        "value": "7800 ug/g",
        "relative_uncertainty_percent": 2,
        "reason": "re-read from the instrument sheet",
    }
    before = snapshot_counts(db)
    with pytest.raises(RuleViolation) as refused:
        measured_values.correct_concentration(db, "tech", request)
    assert refused.value.field == "value" and "likely a typo" in refused.value.reason
    assert snapshot_counts(db) == before
    measured_values.correct_concentration(db, "tech", request | {"confirm_implausible": True})
    with db.read_session() as session:
        row = session.scalars(select(Correction).order_by(Correction.id.desc())).first()
        assert row is not None
        assert row.value["confirmed_implausible"]["material"] == "hydroxyapatite"
