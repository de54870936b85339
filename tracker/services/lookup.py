"""Resolve what a person typed or scanned into a row: public IDs, loan references, names."""

from __future__ import annotations

from datetime import timedelta
from typing import Any, TypeVar

from sqlalchemy import Select, func, select
from sqlalchemy.orm import Session

from tracker.domain.base import Base, HasPublicId
from tracker.domain.errors import InputError, NotFound
from tracker.domain.ids import BadId, Kind, PublicId, is_link, parse_id
from tracker.domain.models import (
    Aliquot,
    BatchPosition,
    ColumnBatch,
    Cut,
    Document,
    InstrumentSession,
    LabelJob,
    LabSetting,
    Lender,
    Loan,
    LoanStatus,
    Location,
    Operator,
    Powder,
    ReferenceMaterial,
    Shipment,
    Solution,
    Specimen,
    UserMaterial,
)
from tracker.domain.timing import DEFAULT_BACKDATING_WINDOW

MODEL_BY_KIND: dict[Kind, type[Any]] = {
    Kind.LENDER: Lender,
    Kind.LOAN: Loan,
    Kind.SPECIMEN: Specimen,
    Kind.POWDER: Powder,
    Kind.SOLUTION: Solution,
    Kind.ALIQUOT: Aliquot,
    Kind.COLUMN_BATCH: ColumnBatch,
    Kind.POSITION: BatchPosition,
    Kind.CUT: Cut,
    Kind.REFERENCE_MATERIAL: ReferenceMaterial,
    Kind.INSTRUMENT_SESSION: InstrumentSession,
    Kind.LOCATION: Location,
    Kind.SHIPMENT: Shipment,
    Kind.OPERATOR: Operator,
    Kind.DOCUMENT: Document,
    Kind.MATERIAL: UserMaterial,
    Kind.PRINT_JOB: LabelJob,
}

T = TypeVar("T", bound=Base)


URI_PREFIX_KEY = "uri_prefix"
_CACHE_KEY = "tracker.label_uri_prefix"


def uri_prefix(session: Session) -> str | None:
    """The lab's label URI prefix (None when labels carry the bare ID), read once per session.

    Every ID a person types or scans goes through here, so a scanned label link is
    accepted wherever an ID is.
    """
    if _CACHE_KEY not in session.info:
        session.info[_CACHE_KEY] = session.scalar(
            select(LabSetting.value).where(LabSetting.key == URI_PREFIX_KEY)
        )
    value = session.info[_CACHE_KEY]
    return value if isinstance(value, str) and value else None  # empty: cleared


BACKDATING_WINDOW_KEY = "backdating_window_hours"


def backdating_window(session: Session) -> timedelta:
    """How far back an entry may be dated without a manager: the lab's setting, or the
    default (:data:`tracker.domain.timing.DEFAULT_BACKDATING_WINDOW`, justified there)."""
    hours = session.scalar(select(LabSetting.value).where(LabSetting.key == BACKDATING_WINDOW_KEY))
    return DEFAULT_BACKDATING_WINDOW if hours is None else timedelta(hours=int(hours))


def prefix_for(session: Session, text: str) -> str | None:
    """The URI prefix that reading ``text`` needs: none for a bare ID (the common scan),
    so the setting is only read for a link."""
    return uri_prefix(session) if is_link(text) else None


def forget_uri_prefix(session: Session) -> None:
    """Drop the cached prefix after the setting changed in this session."""
    session.info.pop(_CACHE_KEY, None)


def read_id(field: str, text: str, prefix: str | None = None) -> PublicId:
    try:
        return parse_id(text, prefix)
    except BadId as exc:
        raise InputError(field, text, str(exc)) from None


def get_any(session: Session, field: str, text: str) -> HasPublicId:
    """The row a public ID names, whatever its kind."""
    public = read_id(field, text, prefix_for(session, text))
    row = session.get(MODEL_BY_KIND[public.kind], public.number)
    if row is None:
        raise NotFound(field, text, f"no {public.kind.name.lower().replace('_', ' ')} has this ID")
    assert isinstance(row, HasPublicId)
    return row


def get_by_id(session: Session, model: type[T], field: str, text: str) -> T:
    """The row of a given kind; an ID of another kind is refused by name."""
    public = read_id(field, text, prefix_for(session, text))
    expected = model.id_kind  # type: ignore[attr-defined]
    if public.kind is not expected:
        raise InputError(
            field,
            text,
            f"is a {public.kind.name.lower().replace('_', ' ')} ID; "
            f"expected a {expected.name.lower().replace('_', ' ')} ID ({expected.value}-...)",
        )
    row = session.get(model, public.number)
    if row is None:
        raise NotFound(field, text, f"no {expected.name.lower().replace('_', ' ')} has this ID")
    return row


def _kind_of(session: Session, text: str) -> Kind | None:
    try:
        return parse_id(text, prefix_for(session, text)).kind
    except BadId:
        return None


def _by_id_or_label(
    session: Session, model: type[T], field: str, text: str, label: Any, what: str
) -> T:
    """A row by its public ID or, failing that, by a unique label column (case-insensitive)."""
    if _kind_of(session, text) is model.id_kind:  # type: ignore[attr-defined]
        return get_by_id(session, model, field, text)
    matches = session.scalars(select(model).where(func.lower(label) == text.lower())).all()
    if len(matches) == 1:
        return matches[0]
    if matches:
        raise InputError(field, text, f"matches several; give the {what}'s ID instead")
    raise NotFound(field, text, f"no {what} has this ID or name")


def get_loan(session: Session, field: str, text: str) -> Loan:
    """A loan by its public ID (LN-...) or by the lender's own loan reference."""
    return _by_id_or_label(session, Loan, field, text, Loan.reference, "loan")


def get_lender(session: Session, field: str, text: str) -> Lender:
    """A lender by its public ID (LE-...) or its name."""
    return _by_id_or_label(session, Lender, field, text, Lender.name, "lender")


def get_reference_material(session: Session, field: str, text: str) -> ReferenceMaterial:
    """A reference material by its public ID (RM-...) or its name."""
    return _by_id_or_label(
        session, ReferenceMaterial, field, text, ReferenceMaterial.name, "reference material"
    )


def open_loan_ids() -> Select[int]:
    """The IDs of the open loans, as a subquery to restrict other statements by."""
    return select(Loan.id).where(Loan.status == LoanStatus.OPEN)
