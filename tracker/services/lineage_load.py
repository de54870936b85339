"""Loading one item with what its lineage line needs, in a few queries rather than one per hop.

A scanned label is answered with the item, its label text, where it is and every ancestor up
to the lender, each named by its label (no collections: masses and remainders belong to the
lineage view). Lazily that is a dozen round trips for a cut; with these loader options it is
one query joining the chain of parents, so a scanner's lookup stays within a few
milliseconds however large the ledger grows.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy.orm import Load

from tracker.domain.models import (
    Aliquot,
    BatchPosition,
    Cut,
    Loan,
    Powder,
    Solution,
    Specimen,
)


def _specimen(at: Any) -> list[Any]:
    """Options below a loader path that points at a specimen: its loan and lender."""
    return [at.joinedload(Specimen.loan).joinedload(Loan.lender)]


def _powder(at: Any) -> list[Any]:
    return _specimen(at.joinedload(Powder.specimen))


def _solution(at: Any) -> list[Any]:
    return _powder(at.joinedload(Solution.powder))


def _aliquot(at: Any) -> list[Any]:
    return _solution(at.joinedload(Aliquot.solution))


def _position(at: Any) -> list[Any]:
    return [
        at.joinedload(BatchPosition.batch),
        at.joinedload(BatchPosition.reference_material),
        *_aliquot(at.joinedload(BatchPosition.aliquot)),
    ]


def _cut(at: Any) -> list[Any]:
    return _position(at.joinedload(Cut.position))


_BELOW = {
    Specimen: _specimen,
    Powder: _powder,
    Solution: _solution,
    Aliquot: _aliquot,
    BatchPosition: _position,
    Cut: _cut,
}


def scan_options(model: type[Any]) -> list[Any]:
    """Loader options that bring a scanned item of ``model`` with its chain of parents (and
    its place) in the one query that reads it; none for an item without parents to show."""
    below = _BELOW.get(model)
    if below is None:
        return []
    options = below(Load(model))
    if hasattr(model, "location"):  # a column position has no place of its own
        options.append(Load(model).joinedload(model.location))
    return options
