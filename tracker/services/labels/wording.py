"""The text on each kind of label: the two or three facts a person needs at the bench.

Lines come most important first, because a small label drops lines from the
end (and shortens a long line with an ellipsis) rather than shrink text below
legibility. Masses carry their unit; dates are ISO days; people appear by
their initials.
"""

from __future__ import annotations

from collections.abc import Iterable
from datetime import datetime
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session, selectinload

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
from tracker.domain.precision import grams, mass_mg
from tracker.services.core.lookup import get_named, read_public_id, rows_named, uri_prefix

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
    Specimen,
    Powder,
    Solution,
    Aliquot,
    BatchPosition,
    Cut,
    ReferenceMaterial,
    Shipment,
    Location,
)
LABELLED_KINDS = (
    "specimens, powders, solutions, aliquots, column positions, cuts, "
    "reference materials, shipments and locations"
)


def _parents(model: type[Any]) -> list[Any]:
    """What each label's text reads beyond the item itself, loaded for many labels at once
    (built when asked for: loader options configure the mappers, which no import may do)."""
    to_specimen = selectinload(Aliquot.solution).selectinload(Solution.powder)
    to_specimen = to_specimen.selectinload(Powder.specimen)
    options: dict[type[Any], list[Any]] = {
        Specimen: [selectinload(Specimen.loan)],
        Powder: [selectinload(Powder.specimen)],
        Solution: [selectinload(Solution.powder).selectinload(Powder.specimen)],
        Aliquot: [to_specimen],
        BatchPosition: [
            selectinload(BatchPosition.batch),
            selectinload(BatchPosition.aliquot).options(to_specimen),
            selectinload(BatchPosition.reference_material),
        ],
        Cut: [
            selectinload(Cut.position).selectinload(BatchPosition.batch),
            selectinload(Cut.position).selectinload(BatchPosition.aliquot).options(to_specimen),
            selectinload(Cut.position).selectinload(BatchPosition.reference_material),
        ],
    }
    return options.get(model, [])


def labelled_items(session: Session, field: str, refs: Iterable[str]) -> list[Labelled]:
    """The rows the IDs name, in their order, with what their labels mention, loaded in a
    few queries (1,000 labels one item at a time would cost thousands of round trips).

    Each ID is read once; one that does not read, names nothing or names something that
    wears no label is refused with ``field``.
    """
    named = [(ref, read_public_id(session, field, ref)) for ref in refs]
    found = rows_named(session, (public for _, public in named), _parents)
    rows: list[Labelled] = []
    for ref, public in named:
        row = found.get(public)
        if row is None:  # no such row: refused the way every lookup refuses it
            row = get_named(session, field, ref, public)
        if not isinstance(row, LABELLED):
            raise InputError(field, ref, f"has no label; labels are printed for {LABELLED_KINDS}")
        rows.append(row)
    return rows


def labelled_item(session: Session, field: str, text: str) -> Labelled:
    """The row an ID names, if it is something that wears a label."""
    (row,) = labelled_items(session, field, [text])
    return row


def facts_of(session: Session, row: Labelled) -> LabelFacts:
    """The label content of one item, its QR payload carrying the lab's URI prefix if set."""
    return LabelFacts(
        item=row.public_id,
        kind=type(row).__name__.lower(),
        lines=tuple(line for line in _lines(session, row) if line),
        payload=qr_payload(row.public_id, uri_prefix(session)),
    )


def label_lines(session: Session, row: Labelled) -> list[str]:
    """The human-readable lines of an item's label (without its QR payload)."""
    return [line for line in _lines(session, row) if line]


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
            where, holds = _position(row.position)
            return [where, _join(f"{row.name} cut", holds)]
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
        _join(row.tissue, mass_mg(row.mass_mg)),
        _join(_day(row.drilled_at), _initials(session, row)),
    ]


# Every label below the specimen starts with the specimen's catalogue number: the name
# people know the material by (the line kept when a small label drops the rest).


def _solution(session: Session, row: Solution) -> list[str]:
    return [
        row.powder.specimen.catalog_number,
        _join(row.acid, grams(row.solution_mass_g)),
        _join(_day(row.dissolved_at), _initials(session, row), f"from {row.powder.public_id}"),
    ]


def _aliquot(session: Session, row: Aliquot) -> list[str]:
    return [
        row.solution.powder.specimen.catalog_number,
        _join(row.purpose.value, grams(row.mass_g)),
        _join(_day(row.taken_at), _initials(session, row), f"from {row.solution.public_id}"),
    ]


def _position(row: BatchPosition) -> list[str]:
    where = _join(row.batch.name, f"column {row.slot}")
    if row.kind is PositionKind.BLANK:
        return [where, "procedural blank"]
    if row.reference_material is not None:
        return [where, f"reference {row.reference_material.name}"]
    if row.aliquot is None:
        return [where, "sample"]
    return [
        where,
        _join(row.aliquot.solution.powder.specimen.catalog_number, row.aliquot.public_id),
    ]


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
    return _operator_initials(session).get(getattr(row, code), "")


_INITIALS_KEY = "tracker.operator_initials"


def _operator_initials(session: Session) -> dict[str, str]:
    """Every operator's initials, read once per session (a sheet names a few people often)."""
    if _INITIALS_KEY not in session.info:
        people = session.execute(select(Operator.code, Operator.name))
        session.info[_INITIALS_KEY] = {code: Operator(name=name).initials for code, name in people}
    found: dict[str, str] = session.info[_INITIALS_KEY]
    return found


def _day(moment: datetime) -> str:
    return moment.date().isoformat()


def _join(*parts: str | None) -> str:
    """Facts on one line, separated by a middle dot; empty parts left out."""
    return " · ".join(part for part in parts if part)
