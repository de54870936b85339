"""Technicians and managers: every manager-only action refuses a technician and says who can.

One table lists every action reserved for managers; each is tried as the technician
(refused, nothing written, the refusal names the operator, the role needed and the
managers who hold it) and then as the manager (done). Both backends.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import pytest

from tests import factories as make
from tests import keys
from tests.conftest import Counts
from tracker.db.database import Database
from tracker.domain.errors import RuleViolation
from tracker.services.admin import setup
from tracker.services.bench import chemistry, custody, drilling
from tracker.services.corrections import weighings
from tracker.services.instrument import results
from tracker.services.labels import handling
from tracker.services.loans import amendments, specimens

REASON = "the lender agreed by letter of 2026-01-04"


def _returned_loan(db: Database) -> str:
    loan = make.loan(db)
    specimen = make.specimen(db, loan)
    specimens.return_specimen(db, "tech", {"specimen": specimen, "condition": "as received"})
    custody.mark_loan_returned(db, "tech", {"loan": loan})
    return loan


def _others_powder(db: Database) -> str:
    setup.add_operator(db, "boss", keys.person("tova", "Tova Lind"))
    return drilling.drill(
        db,
        "tova",
        {
            "specimen": make.specimen(db, make.loan(db)),
            "tissue": "enamel",
            "tare": "1000.000 mg",
            "gross": "1002.000 mg",
        },
    ).item.id


Setup = Callable[[Database], Any]
Act = Callable[[Database, str, Any], Any]

MANAGER_ONLY: dict[str, tuple[str, Setup, Act]] = {
    "adding an operator": (
        "adding an operator",
        lambda db: None,
        lambda db, who, _: setup.add_operator(db, who, {"code": "new", "name": "New One"}),
    ),
    "overriding a loan limit": (
        "overriding a loan limit",
        lambda db: make.specimen(db, make.loan(db, max_mass_per_specimen="1 mg")),
        lambda db, who, spec: drilling.drill(
            db,
            who,
            {
                "specimen": spec,
                "tissue": "enamel",
                "tare": "1000.000 mg",
                "gross": "1001.500 mg",
                "override_reason": REASON,
            },
        ),
    ),
    "amending a loan": (
        "amending a loan",
        make.loan,
        lambda db, who, loan: amendments.amend_loan(
            db,
            who,
            {
                "loan": loan,
                "kind": "extension",
                "effective_from": "2026-01-05",
                "reason": REASON,
                "due_on": "2028-06-30",
            },
        ),
    ),
    "closing a loan": (
        "closing a loan",
        _returned_loan,
        lambda db, who, loan: custody.close_loan(db, who, {"loan": loan, "reason": REASON}),
    ),
    "correcting another operator's entry": (
        "correcting powder mass recorded by tova",
        _others_powder,
        lambda db, who, powder: weighings.correct_weighing(
            db,
            who,
            {"item": powder, "tare": "1000.000 mg", "gross": "1002.100 mg", "reason": REASON},
        ),
    ),
    "setting an accepted reference value": (
        "setting an accepted reference value",
        lambda db: chemistry.add_reference_material(db, "tech", {"name": "RM-Z", "element": "Ca"}),
        lambda db, who, _: results.set_reference_value(
            db,
            who,
            {
                "reference": "RM-Z",
                "ratio": "44/40",
                "scale": "STD-X",
                "value": 0.7,
                "two_sd": 0.1,
                "source": "invented for the test",
            },
        ),
    ),
    "setting the label URI prefix": (
        "setting the label URI prefix",
        lambda db: None,
        lambda db, who, _: handling.set_uri_prefix(
            db, who, {"uri_prefix": "HTTPS://LAB.EXAMPLE/T/"}
        ),
    ),
}


@pytest.mark.parametrize("action", list(MANAGER_ONLY))
def test_manager_only_actions_refuse_a_technician_and_say_who_can(
    db: Database, counts: Counts, action: str
) -> None:
    words, prepare, act = MANAGER_ONLY[action]
    target = prepare(db)
    before = counts()
    with pytest.raises(RuleViolation) as caught:
        act(db, "tech", target)
    assert (caught.value.field, caught.value.value) == ("operator", "tech")
    assert caught.value.reason == (
        f"{words} needs an operator with the manager role (tech is a technician); "
        "ask a manager (boss) to do it"
    )
    assert counts() == before
    assert act(db, "boss", target).event_seq == before["ledger_head"] + 1


def test_a_loan_closes_only_after_its_return_and_its_leftovers(
    db: Database, counts: Counts
) -> None:
    loan = make.loan(db)
    specimen = make.specimen(db, loan)
    solution = make.solution(db, make.powder(db, specimen, "1.000"))  # all powder dissolved
    close = {"loan": loan, "reason": "results sent to the lender"}
    with pytest.raises(RuleViolation, match="has not been returned yet"):
        custody.close_loan(db, "boss", close)
    specimens.return_specimen(db, "tech", {"specimen": specimen, "condition": "as received"})
    custody.mark_loan_returned(db, "tech", {"loan": loan})
    before = counts()
    with pytest.raises(RuleViolation, match=f"still in the lab: {solution}"):
        custody.close_loan(db, "boss", close)
    assert counts() == before
    custody.dispose(db, "tech", {"item": solution, "outcome": "destroyed", "reason": "terms"})
    assert custody.close_loan(db, "boss", close).item.status == "closed"
    with pytest.raises(RuleViolation, match="is already closed"):
        custody.close_loan(db, "boss", close)
    with pytest.raises(RuleViolation, match="is closed"):
        amendments.amend_loan(
            db,
            "boss",
            {
                "loan": loan,
                "kind": "other",
                "effective_from": "2026-01-05",
                "reason": REASON,
                "due_on": "2028-01-01",
            },
        )


def test_a_manager_deactivated_by_hand_in_the_table_is_still_the_ledgers_manager(
    db: Database,
) -> None:
    """The ``operator`` table decides nothing: boss deactivated by an UPDATE is still the
    manager the ledger's signed events name, and a technician is still refused."""
    from sqlalchemy import text

    with db.engine.begin() as conn:
        conn.execute(text("UPDATE operator SET active = FALSE WHERE code = 'boss'"))
    with pytest.raises(RuleViolation) as caught:
        setup.add_operator(db, "tech", {"code": "new", "name": "New One"})
    assert caught.value.reason.endswith(
        "needs an operator with the manager role (tech is a technician); "
        "ask a manager (boss) to do it"
    )
