"""Drills are judged by the loan's terms in force on their day; overrides need a manager."""

from __future__ import annotations

import hashlib
import json

import pytest
from sqlalchemy import select

from tests import factories as make
from tests.conftest import Counts
from tracker.db.database import Database
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.models import CustodyEvent, Document, Powder
from tracker.services.bench import drilling
from tracker.services.core.inputs import Raw
from tracker.services.ledger.chain import verify
from tracker.services.loans import amendments


def drill(db: Database, specimen: str, mg: str, actor: str = "tech", **extra: object) -> str:
    gross = 1000 + float(mg)
    request = {
        "specimen": specimen,
        "tissue": "enamel",
        "tare": "1000.000 mg",
        "gross": f"{gross:.3f} mg",
    } | extra
    return drilling.drill(db, actor, request).item.id


def test_per_specimen_limit_refusal_states_the_numbers(db: Database, counts: Counts) -> None:
    spec = make.specimen(db, make.loan(db, max_mass_per_specimen="3 mg"))
    drill(db, spec, "2.500")
    before = counts()
    with pytest.raises(RuleViolation) as caught:
        drill(db, spec, "0.600")
    message = caught.value.one_line()
    # u = 0.001 mg / √6 = 0.00041 mg (GUM F.2.2.1): leading digits 408 keep one digit
    assert caught.value.field == "drilled-mass" and "0.6000 ± 0.0004 mg" in message
    for part in (
        "per-specimen limit 3 mg",
        "already drilled 2.5000 ± 0.0004 mg",
        "remaining 0.5000 ± 0.0004 mg",
        "manager may override",
    ):
        assert part in message
    assert counts() == before


@pytest.mark.parametrize(
    ("terms", "setup_mg", "request_mg", "field", "fragment"),
    [
        (
            {"max_total_mass": "4 mg", "max_mass_per_specimen": "4 mg"},
            "3.000",
            "1.500",
            "drilled-mass",
            "loan total limit 4 mg",
        ),
        ({"max_specimens_sampled": 1}, "1.000", "1.000", "specimen", "specimen count limit 1"),
        ({"permitted_tissues": "shell"}, None, "1.000", "tissue", "permits only shell"),
    ],
)
def test_each_limit_refuses(
    db: Database,
    counts: Counts,
    terms: Raw,
    setup_mg: str | None,
    request_mg: str,
    field: str,
    fragment: str,
) -> None:
    loan = make.loan(db, **terms)
    if setup_mg is not None:
        drill(db, make.specimen(db, loan), setup_mg)
    target = make.specimen(db, loan)
    before = counts()
    with pytest.raises(RuleViolation) as caught:
        drill(db, target, request_mg)
    assert caught.value.field == field and fragment in caught.value.reason
    assert counts() == before


def test_override_needs_a_manager_and_is_recorded(db: Database, counts: Counts) -> None:
    spec = make.specimen(db, make.loan(db, max_mass_per_specimen="1 mg"))
    reason = "lender agreed by phone to a repeat drill; letter to follow"
    before = counts()
    with pytest.raises(RuleViolation, match="manager role") as caught:
        drill(db, spec, "1.500", override_reason=reason)
    assert caught.value.field == "operator"
    assert counts() == before
    powder = drill(db, spec, "1.500", actor="boss", override_reason=reason)
    with db.read_session() as session:
        row = session.scalars(select(Powder)).one()
        assert (row.public_id, row.override_reason) == (powder, reason)
        event = session.scalars(select(CustodyEvent).order_by(CustodyEvent.seq.desc())).first()
        assert event is not None
        override = json.loads(event.payload)["override"]
        assert override["reason"] == reason and "per-specimen limit 1 mg" in override["limits"][0]
    assert verify(db).ok


def test_override_without_a_broken_limit_is_refused(db: Database, counts: Counts) -> None:
    spec = make.specimen(db, make.loan(db))
    before = counts()
    with pytest.raises(InputError, match="nothing to override"):
        drill(db, spec, "1.000", actor="boss", override_reason="just in case, no reason at all")
    assert counts() == before


def amend(db: Database, loan: str, actor: str = "boss", **changes: object) -> None:
    request = {
        "loan": loan,
        "kind": "extension",
        "effective_from": "2026-01-05",
        "reason": "granted by letter",
    } | changes
    amendments.amend_loan(db, actor, request)


def test_terms_in_force_on_the_drill_day_decide(db: Database) -> None:
    # the test clock reads 2026-01-05; the loan was received on 2026-01-02, due 2026-01-03
    loan = make.loan(db, due_on="2026-01-03")
    spec = make.specimen(db, loan, received_at="2026-01-02T10:00:00Z")
    with pytest.raises(RuleViolation, match="recorded on 2026-01-05"):
        drill(db, spec, "0.500", drilled_at="2026-01-03T15:00:00Z")  # on the due day, typed late
    with pytest.raises(RuleViolation, match="was due on 2026-01-03"):
        drill(db, spec, "0.500")
    amend(db, loan, due_on="2026-03-01")
    drill(db, spec, "0.500")  # today, under the extension
    with pytest.raises(RuleViolation, match="was due on 2026-01-03"):
        drill(db, spec, "0.500", drilled_at="2026-01-04T10:00:00Z")  # before it took effect
    # on the old due day, recorded while the extension is in force: both days are within
    drill(db, spec, "0.500", drilled_at="2026-01-03T15:00:00Z")


def test_raised_allowance_applies_from_its_day(db: Database) -> None:
    loan = make.loan(db, max_mass_per_specimen="1 mg", max_total_mass="5 mg")
    spec = make.specimen(db, loan)
    drill(db, spec, "1.000")
    with pytest.raises(RuleViolation):
        drill(db, spec, "0.500")
    amend(db, loan, kind="allowance", max_mass_per_specimen="2 mg")
    drill(db, spec, "0.500")
    with pytest.raises(RuleViolation, match="per-specimen limit 2 mg"):
        drill(db, spec, "0.600")


def test_amendment_rules(db: Database, counts: Counts) -> None:
    loan = make.loan(db, due_on="2026-06-30")
    before = counts()
    with pytest.raises(RuleViolation, match="manager role"):
        amend(db, loan, actor="tech", due_on="2026-09-30")
    with pytest.raises(InputError, match="before the loan began") as caught:
        amend(db, loan, effective_from="2025-12-01", due_on="2026-09-30")
    assert caught.value.field == "effective-from"
    with pytest.raises(InputError, match="changes nothing"):
        amend(db, loan, kind="other")
    with pytest.raises(InputError, match="must move the due date"):
        amend(db, loan, due_on="2026-05-01")
    with pytest.raises(InputError, match="original terms"):
        amend(db, loan, kind="original", due_on="2026-09-30")
    with pytest.raises(InputError, match="exceeds the loan's total"):
        amend(db, loan, kind="allowance", max_mass_per_specimen="50 mg")
    assert counts() == before


def test_amendment_document_is_kept_by_sha256(db: Database) -> None:
    loan = make.loan(db)
    letter = b"Invented letter: the due date moves to 31 March 2028."
    amend(
        db,
        loan,
        effective_from="2026-01-04",
        due_on="2028-03-31",
        document={"filename": "letter.txt", "content": letter},
    )
    amendments.attach_document(
        db,
        "tech",
        {
            "loan": loan,
            "role": "correspondence",
            "document": {"filename": "copy.txt", "content": letter},
        },
    )
    with db.read_session() as session:
        stored = session.scalars(select(Document)).one()  # the same bytes are kept once
        assert stored.sha256 == hashlib.sha256(letter).hexdigest()
        assert stored.content == letter and stored.filename == "letter.txt"
