"""What the interface offers a person to choose from on a loan: the reference scales its
results can be shown on, and the stored Sr curves; on both backends."""

from __future__ import annotations

import pytest

from tests import factories as make
from tests.conftest import Counts
from tests.services.test_instrument import bench, do_import, session_of
from tracker.db.database import Database
from tracker.demo import scenario_path
from tracker.domain.errors import RuleViolation
from tracker.services.bench import chemistry
from tracker.services.instrument import reduction, results, screening, sessions

CURVE = (scenario_path().parent / "instrument" / "sr-curve-INVENTED.csv").read_bytes()


def accepted(db: Database, reference: str, ratio: str, value: float) -> None:
    """An invented accepted δ of ``reference`` on the test session's standard's scale."""
    request = {
        "reference": reference,
        "ratio": ratio,
        "scale": "STD-X",
        "value": value,
        "two_sd": 0.1,
        "source": "invented for the test",
    }
    results.set_reference_value(db, "boss", request)


def test_a_scale_is_offered_with_an_accepted_value_for_any_ratio(db: Database) -> None:
    b = bench(db)
    session = do_import(db, session_of(b.cut, [0.5, 0.6, 0.4]))
    reduction.reduce_session(db, "tech", {"session": session})
    loan = results.results(db)[0].loan
    for name in ("RM-B", "RM-C"):
        chemistry.add_reference_material(db, "boss", {"name": name, "element": "Ca"})
    accepted(db, "RM-A", "44/40", 1.2)
    accepted(db, "RM-A", "44/42", 0.6)
    accepted(db, "RM-B", "44/40", 1.1)  # no 44/42: its δ44/42 stays on the session's scale
    results.set_reference_value(
        db,
        "boss",
        {
            "reference": "RM-C",
            "ratio": "44/40",
            "scale": "ANOTHER-STD",  # a value, but not on the scale the loan was measured on
            "value": 0.9,
            "two_sd": 0.1,
            "source": "invented for the test",
        },
    )
    assert results.scales(db, loan) == ["RM-A", "RM-B"]
    assert {r.scale for r in results.results(db, loan, "RM-A")} == {"RM-A"}
    measured = {r.ratio: r for r in results.results(db, loan)}
    partial = {r.ratio: r for r in results.results(db, loan, "RM-B")}
    assert partial["44/40"].scale == "RM-B"
    assert partial["44/40"].flags == measured["44/40"].flags  # the bench's flags, no more
    # δ_new = (1 + δ/1000)/(1 + a/1000) − 1, the exact change of scale (common practice)
    expected = ((1 + measured["44/40"].value / 1000) / (1 + 1.1 / 1000) - 1) * 1000
    assert partial["44/40"].value == pytest.approx(expected, abs=1e-12)
    assert partial["44/42"].scale == "STD-X"
    assert partial["44/42"].value == measured["44/42"].value
    assert any(f.startswith("no scale value") and "RM-B" in f for f in partial["44/42"].flags)
    with pytest.raises(RuleViolation, match="no accepted value of RM-C"):
        results.results(db, loan, "RM-C")  # nothing here could be put on its scale


def test_a_loan_without_results_has_no_scale_to_change_to(db: Database) -> None:
    loan = make.loan(db)
    chemistry.add_reference_material(db, "boss", {"name": "RM-C", "element": "Ca"})
    chemistry.add_reference_material(db, "boss", {"name": "STD-X", "element": "Ca"})
    accepted(db, "RM-C", "44/40", 1.2)
    assert results.scales(db, loan) == []


def test_curves_are_listed_by_name_and_a_loan_knows_its_own(db: Database, counts: Counts) -> None:
    loan = make.loan(db)
    for name in ("second-INVENTED", "first-INVENTED"):
        screening.add_curve(db, "boss", {"name": name, "content": CURVE, "filename": "c.csv"})
    listed = screening.list_curves(db)
    assert [c.name for c in listed] == ["first-INVENTED", "second-INVENTED"]
    assert (listed[0].points, listed[0].youngest_ma, listed[0].oldest_ma) == (7, 370.0, 400.0)
    assert screening.chosen_curve(db, loan) is None
    before = counts()
    screening.use_curve(db, "tech", {"loan": loan, "curve": "second-INVENTED"})
    chosen = screening.chosen_curve(db, loan)
    assert chosen is not None and chosen.name == "second-INVENTED"
    after = counts()
    changed = {
        table: after[table] - before[table] for table in after if after[table] != before[table]
    }
    assert changed == {"custody_event": 1, "ledger_head": 1}  # one event, no other row


def test_the_ratios_offered_are_those_measured_and_calcium_s_usual_one(db: Database) -> None:
    b = bench(db)
    session = do_import(db, session_of(b.cut, [0.5, 0.6, 0.4]))
    reduction.reduce_session(db, "tech", {"session": session})
    loan = results.results(db)[0].loan
    assert results.ratios(db, loan) == ["44/40", "44/42"]
    # a loan with no δ offers nothing to convert
    assert results.ratios(db, make.loan(db)) == []


def test_a_loan_measured_only_on_44_42_is_offered_44_40(db: Database) -> None:
    b = bench(db)
    only_4442 = {
        "format": "csv",
        "columns": {"run_order": "Run", "sample_name": "Name", "ratios": {"44/42": "r4442"}},
    }
    sessions.save_profile(db, "tech", {"name": "no 40", "definition": only_4442})
    session = do_import(db, session_of(b.cut, [0.5, 0.6, 0.4]), profile="no 40")
    reduction.reduce_session(db, "tech", {"session": session})
    (line,) = results.results(db)
    assert line.ratio == "44/42"
    assert results.ratios(db, line.loan) == ["44/40", "44/42"]  # δ44/40: how Ca is reported
