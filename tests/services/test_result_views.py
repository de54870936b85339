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
from tracker.services.instrument import reduction, results, screening

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


def test_a_scale_is_offered_only_with_an_accepted_value_for_every_ratio(db: Database) -> None:
    b = bench(db)
    session = do_import(db, session_of(b.cut, [0.5, 0.6, 0.4]))
    reduction.reduce_session(db, "tech", {"session": session})
    loan = results.results(db)[0].loan
    chemistry.add_reference_material(db, "boss", {"name": "RM-B", "element": "Ca"})
    accepted(db, "RM-A", "44/40", 1.2)
    accepted(db, "RM-A", "44/42", 0.6)
    accepted(db, "RM-B", "44/40", 1.1)  # no 44/42: its scale cannot hold the loan's results
    assert results.scales(db, loan) == ["RM-A"]
    assert {r.scale for r in results.results(db, loan, "RM-A")} == {"RM-A"}
    with pytest.raises(RuleViolation, match="44/42"):
        results.results(db, loan, "RM-B")  # the refusal the chooser spares a person


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
