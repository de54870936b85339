"""The text on each kind of label: the two or three facts a person needs at the bench.

Lines come most important first, because a small label drops lines from the
end (and shortens a long line with an ellipsis) rather than shrink text below
legibility. Masses carry their unit; dates are ISO days; people appear by
their initials.
"""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import select
from sqlalchemy.orm import Session

from tracker.domain.errors import InputError
from tracker.domain.labels import LabelFacts, qr_payload
from tracker.domain.models import (
    Aliquot,
    BatchPosition,
    Cut,
    Loan,
    Location,
    Operator,
    PositionKind,
    Powder,
    ReferenceMaterial,
    Shipment,
    Solution,
    Specimen,
)
from tracker.domain.units import format_mass_mg
from tracker.services.lookup import get_any, uri_prefix

Labelled = (
    Specimen
    | Powder
    | Solution
    | Aliquot
    | BatchPosition
    | Cut
    | ReferenceMaterial
    | Shipment
    | Location
)
LABELLED = (
    Specimen, Powder, Solution, Aliquot, BatchPosition, Cut, ReferenceMaterial, Shipment, Location,
)  # fmt: skip
LABELLED_KINDS = (
    "specimens, powders, solutions, aliquots, column positions, cuts, "
    "reference materials, shipments and locations"
)


def labelled_item(session: Session, field: str, text: str) -> Labelled:
    """The row an ID names, if it is something that wears a label."""
    row = get_any(session, field, text)
    if not isinstance(row, LABELLED):
        raise InputError(field, text, f"has no label; labels are printed for {LABELLED_KINDS}")
    return row


def facts_of(session: Session, row: Labelled) -> LabelFacts:
    """The label content of one item, its QR payload carrying the lab's URI prefix if set."""
    return LabelFacts(
        item=row.public_id,
        kind=type(row).__name__.lower(),
        lines=tuple(line for line in _lines(session, row) if line),
        payload=qr_payload(row.public_id, uri_prefix(session)),
    )


def _lines(session: Session, row: Labelled) -> list[str]:
    match row:
        case Specimen():
            return _specimen(row)
        case Powder():
            return _powder(session, row)
        case Solution():
            return _solution(session, row)
        case Aliquot():
            return _aliquot(session, row)
        case BatchPosition():
            return _position(row)
        case Cut():
            return [*_position(row.position)[:1], f"{row.name} cut"]
        case ReferenceMaterial():
            return [row.name, _join(row.element, row.matrix)]
        case Shipment():
            return _shipment(session, row)
        case Location():
            parent = row.parent.path if row.parent is not None else ""
            return [row.name, _join(row.kind.value, parent)]


def _specimen(row: Specimen) -> list[str]:
    taxon = row.scientific_name or "taxon not given"
    return [row.catalog_number, taxon, f"loan {row.loan.reference}"]


def _powder(session: Session, row: Powder) -> list[str]:
    return [
        row.specimen.catalog_number,
        _join(row.tissue, format_mass_mg(row.mass_mg)),
        _join(_day(row.drilled_at), _initials(session, row)),
    ]


def _solution(session: Session, row: Solution) -> list[str]:
    return [
        f"from {row.powder.public_id}",
        _join(row.acid, f"{row.solution_mass_g:.4f} g"),
        _join(_day(row.dissolved_at), _initials(session, row)),
    ]


def _aliquot(session: Session, row: Aliquot) -> list[str]:
    return [
        f"from {row.solution.public_id}",
        _join(row.purpose.value, f"{row.mass_g:.4f} g"),
        _join(_day(row.taken_at), _initials(session, row)),
    ]


def _position(row: BatchPosition) -> list[str]:
    where = _join(row.batch.name, f"column {row.slot}")
    if row.kind is PositionKind.BLANK:
        return [where, "procedural blank"]
    if row.reference_material is not None:
        return [where, f"reference {row.reference_material.name}"]
    holds = row.aliquot.public_id if row.aliquot is not None else "sample"
    return [where, f"sample {holds}"]


def _shipment(session: Session, row: Shipment) -> list[str]:
    loan = session.get(Loan, row.loan_id)
    reference = loan.reference if loan is not None else "loan ?"
    return [
        f"loan {reference}",
        _join(row.direction.value, row.shipped_on.isoformat()),
        _join(row.carrier or "", row.tracking or ""),
    ]


def _initials(session: Session, row: Powder | Solution | Aliquot) -> str:
    code = {Powder: "drilled_by", Solution: "dissolved_by", Aliquot: "taken_by"}[type(row)]
    operator = session.scalar(select(Operator).where(Operator.code == getattr(row, code)))
    return operator.initials if operator is not None else ""


def _day(moment: datetime) -> str:
    return moment.date().isoformat()


def _join(*parts: str | None) -> str:
    """Facts on one line, separated by a middle dot; empty parts left out."""
    return " · ".join(part for part in parts if part)
