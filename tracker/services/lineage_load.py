"""Loading one item with what its lineage line needs, in a few queries rather than one per hop.

A scanned label is answered with the item, its label text, where it is and every ancestor up
to the lender, each named by its label (no collections: masses and remainders belong to the
lineage view). Lazily that is a dozen round trips for a cut; with these loader options it is
one query joining the chain of parents, so a scanner's lookup stays within a few
milliseconds however large the ledger grows.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Load, Session

from tracker.domain.ids import BadId, parse_id
from tracker.domain.models import (
    Aliquot,
    BatchPosition,
    Cut,
    Loan,
    Powder,
    Solution,
    Specimen,
)
from tracker.services.lookup import MODEL_BY_KIND


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


def load_for_scan(session: Session, text: str, uri_prefix: str | None) -> None:
    """Put the item ``text`` names, its ancestors and their collections in the session.

    Reading errors are left to the caller, which reports them with the field it was given.
    """
    try:
        public = parse_id(text, uri_prefix)
    except BadId:
        return
    model = MODEL_BY_KIND[public.kind]
    below = _BELOW.get(model)
    if below is not None:
        options = below(Load(model))
        if hasattr(model, "location"):  # a column position has no place of its own
            options.append(Load(model).joinedload(model.location))
        query = select(model).where(model.id == public.number).options(*options)
        keep(session, list(session.scalars(query).unique()))


_KEPT = "tracker.preloaded"


def keep(session: Session, rows: list[Any]) -> None:
    """Hold preloaded rows for the session's life: its identity map holds rows only weakly,
    so rows nobody refers to would be dropped and read again, one query each."""
    session.info.setdefault(_KEPT, []).extend(rows)
