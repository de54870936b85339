"""Operators, roles, locations, lenders and loan terms through the services (both backends)."""

from __future__ import annotations

import pytest

from tests import factories as make
from tests.conftest import Counts
from tracker.db.database import Database
from tracker.domain.errors import InputError, RuleViolation
from tracker.services.admin import setup
from tracker.services.core.inputs import Raw
from tracker.services.loans import lending, specimens


def test_only_managers_add_operators(db: Database, counts: Counts) -> None:
    before = counts()
    with pytest.raises(RuleViolation, match="manager role") as caught:
        setup.add_operator(db, "tech", {"code": "newbie", "name": "New Person"})
    assert caught.value.field == "operator" and caught.value.value == "tech"
    assert counts() == before
    setup.add_operator(db, "boss", {"code": "newbie", "name": "New Person"})
    with pytest.raises(RuleViolation, match="already exists"):
        setup.add_operator(db, "boss", {"code": "newbie", "name": "Someone Else"})
    assert [o.code for o in setup.list_operators(db)] == ["boss", "newbie", "tech"]


@pytest.mark.parametrize("actor", [None, "", "ghost"])
def test_every_write_needs_a_known_operator(
    db: Database, counts: Counts, actor: str | None
) -> None:
    before = counts()
    with pytest.raises(InputError) as caught:
        lending.add_lender(db, actor, {"name": "Nowhere Museum"})
    assert caught.value.field == "operator"
    assert counts() == before


def test_location_tree_rules(db: Database, counts: Counts) -> None:
    hall = setup.add_location(db, "tech", {"kind": "building", "name": "Hall Z"}).item
    room = setup.add_location(db, "tech", {"kind": "room", "name": "Z1", "parent": hall.id}).item
    shelf = setup.add_location(db, "tech", {"kind": "shelf", "name": "S1", "parent": room.id}).item
    assert shelf.path == "Hall Z / Z1 / S1"
    before = counts()
    with pytest.raises(RuleViolation, match="cannot be placed inside"):
        setup.add_location(db, "tech", {"kind": "room", "name": "R", "parent": shelf.id})
    with pytest.raises(InputError, match="needs an enclosing"):
        setup.add_location(db, "tech", {"kind": "box", "name": "Loose box"})
    with pytest.raises(RuleViolation, match="already exists"):
        setup.add_location(db, "tech", {"kind": "shelf", "name": "S1", "parent": room.id})
    with pytest.raises(InputError):
        setup.add_location(db, "tech", {"kind": "attic", "name": "A", "parent": hall.id})
    assert counts() == before


def test_loan_records_original_terms(db: Database) -> None:
    ref = make.loan(db, permitted_tissues="Enameloid, enamel ,", max_total_mass="0.015 g")
    loan = next(v for v in lending.list_loans(db) if v.reference == ref)
    assert loan.terms.version == 1 and loan.terms.kind == "original"
    assert loan.terms.permitted_tissues == ["enamel", "enameloid"]
    assert loan.terms.max_total_mass_mg == pytest.approx(15.0)


@pytest.mark.parametrize(
    ("terms", "field", "fragment"),
    [
        (
            {"max_mass_per_specimen": "10 mg", "max_total_mass": "5 mg"},
            "max-mass-per-specimen",
            "exceeds",
        ),
        ({"permitted_tissues": " , "}, "terms.permitted-tissues", "at least one tissue"),
        ({"max_total_mass": "-3 mg"}, "terms.max-total-mass", "greater than zero"),
        ({"max_specimens_sampled": 0}, "terms.max-specimens-sampled", "must be above 0"),
        ({"due_on": "2025-12-01"}, "due-on", "before the loan starts"),
        ({"powder_disposition": "sell"}, "terms.powder-disposition", "return"),
    ],
)
def test_inconsistent_terms_are_refused(
    db: Database, counts: Counts, terms: Raw, field: str, fragment: str
) -> None:
    before = counts()
    with pytest.raises(InputError) as caught:
        make.loan(db, **terms)
    assert caught.value.field == field
    assert fragment in caught.value.reason
    # the lender made by the factory is its own unit of work: compare without it
    after = counts()
    assert after["loan"] == before["loan"] and after["loan_terms"] == before["loan_terms"]
    assert after["ledger_head"] == before["ledger_head"] + 1  # only the lender event


def test_same_catalogue_number_twice_on_a_loan_is_refused(db: Database) -> None:
    ref = make.loan(db)
    specimens.add_specimen(db, "boss", {"loan": ref, "catalog_number": "X 1"})
    with pytest.raises(RuleViolation, match="already on this loan"):
        specimens.add_specimen(db, "boss", {"loan": ref, "catalog_number": "X 1"})
    with pytest.raises(InputError, match="older than the oldest"):
        specimens.add_specimen(
            db, "boss", {"loan": ref, "catalog_number": "X 2", "age_max_ma": 10, "age_min_ma": 12}
        )
