"""Resolve what a person typed or scanned into a row: public IDs, loan references, names."""

from __future__ import annotations

from collections.abc import Callable, Iterable, Sequence
from datetime import timedelta
from typing import Any, TypeVar

from sqlalchemy import Select, func, select
from sqlalchemy.orm import Session

from tracker.domain.base import Base, HasPublicId
from tracker.domain.errors import InputError, NotFound
from tracker.domain.ids import BadId, Kind, PublicId, is_link, looks_like_id, meant_as_id, parse_id
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


def read_public_id(session: Session, field: str, text: str) -> PublicId:
    """What ``text`` names, read once (the lab's link prefix looked up only for a link);
    the rows are then found by the value read (:func:`get_named`), never by reading again."""
    return read_id(field, text, prefix_for(session, text))


def rows_named(
    session: Session,
    publics: Iterable[PublicId],
    options: Callable[[type[Any]], Sequence[Any]] = lambda model: (),
) -> dict[PublicId, Any]:
    """The rows many IDs name, a few queries for all of them (one per kind and 500 IDs, with
    ``options(model)`` loading what the caller reads of each); an ID naming nothing is absent."""
    wanted: dict[Kind, set[int]] = {}
    for public in publics:
        wanted.setdefault(public.kind, set()).add(public.number)
    found: dict[PublicId, Any] = {}
    for kind, numbers in wanted.items():
        model = MODEL_BY_KIND[kind]
        ordered = sorted(numbers)
        for start in range(0, len(ordered), _CHUNK):
            query = select(model).where(model.id.in_(ordered[start : start + _CHUNK]))
            for row in session.scalars(query.options(*options(model))):
                found[PublicId(kind, row.id)] = row
    return found


_CHUNK = 500  # IDs per IN list: well under every backend's limit on bound parameters


def get_named(
    session: Session, field: str, text: str, public: PublicId, options: Sequence[Any] = ()
) -> HasPublicId:
    """The row an ID already read names (``text``, as typed, for the refusal); ``options``
    are loader options for what the caller reads of it."""
    row = session.get(MODEL_BY_KIND[public.kind], public.number, options=options)
    if row is None:
        raise NotFound(field, text, f"no {_kind_name(public.kind)} has this ID")
    assert isinstance(row, HasPublicId)
    return row


def get_any(session: Session, field: str, text: str) -> HasPublicId:
    """The row a public ID names, whatever its kind."""
    return get_named(session, field, text, read_public_id(session, field, text))


def get_by_id(session: Session, model: type[T], field: str, text: str) -> T:
    """The row of a given kind; an ID of another kind is refused by name. A kind people
    know by a name (a specimen's catalogue number, a loan's reference, a location's name)
    is found by that name too, when it names exactly one."""
    named = model in _NAMED_BY
    if named and not looks_like_id(text, prefix_for(session, text)):
        return _by_name(session, model, field, text)
    try:
        public = read_public_id(session, field, text)
    except InputError:
        found = _named(session, model, text) if named else []
        if len(found) == 1:  # a loan reference shaped like an ID (LN-2026-014)
            return found[0]
        raise
    return _of_kind(session, model, field, text, public)


# The column holding the name people know an item by, and what the name is called.
_NAMED_BY: dict[type[Any], tuple[str, str]] = {
    Specimen: ("catalog_number", "catalogue number"),
    Loan: ("reference", "reference"),
    Lender: ("name", "name"),
    Location: ("name", "name"),
    ReferenceMaterial: ("name", "name"),
}
_SHOWN_MATCHES = 5


def _by_name(session: Session, model: type[T], field: str, text: str) -> T:
    """The one row whose name is ``text`` (any case, spaces as typed); several are refused
    with their IDs to choose from, none with the ID's own complaint if ``text`` was meant as
    an ID (``SP-12-??``)."""
    called = _NAMED_BY[model][1]
    what = _kind_name(model.id_kind)  # type: ignore[attr-defined]
    matches = _named(session, model, text)
    if len(matches) == 1:
        return matches[0]
    if matches:
        ids = ", ".join(m.public_id for m in matches[:_SHOWN_MATCHES])  # type: ignore[attr-defined]
        more = ", …" if len(matches) > _SHOWN_MATCHES else ""
        raise InputError(
            field, text, f"is the {called} of several: {ids}{more}; scan or type the {what}'s ID"
        )
    if meant_as_id(text):
        read_public_id(session, field, text)  # refused as the ID it was meant to be
    raise NotFound(field, text, f"no {what} has this ID or {called}")


def _named(session: Session, model: type[T], text: str) -> list[T]:
    """The rows (a few at most) whose name is ``text``, in any case."""
    wanted = func.lower(getattr(model, _NAMED_BY[model][0])) == text.strip().lower()
    return list(session.scalars(select(model).where(wanted).limit(_SHOWN_MATCHES + 1)))


def find_item(session: Session, field: str, text: str) -> HasPublicId:
    """Anything by its ID, or else by the name people know it by — a specimen's catalogue
    number, a loan's reference, a location's name: what a person scans or types to find it."""
    if looks_like_id(text, prefix_for(session, text)):
        return get_any(session, field, text)
    for model in (Specimen, Loan, Location):
        try:
            found = _by_name(session, model, field, text)
        except NotFound:
            continue
        assert isinstance(found, HasPublicId)
        return found
    raise NotFound(
        field,
        text,
        "names nothing: no ID, specimen catalogue number, loan reference or location name",
    )


def _of_kind(session: Session, model: type[T], field: str, text: str, public: PublicId) -> T:
    expected = model.id_kind  # type: ignore[attr-defined]
    if public.kind is not expected:
        raise InputError(
            field,
            text,
            f"is a {_kind_name(public.kind)} ID; "
            f"expected a {_kind_name(expected)} ID ({expected.value}-...)",
        )
    row = session.get(model, public.number)
    if row is None:
        raise NotFound(field, text, f"no {_kind_name(expected)} has this ID")
    return row


def _kind_name(kind: Kind) -> str:
    return kind.name.lower().replace("_", " ")


def get_loan(session: Session, field: str, text: str) -> Loan:
    """A loan by its public ID (LN-...) or by the lender's own loan reference."""
    return get_by_id(session, Loan, field, text)


def get_lender(session: Session, field: str, text: str) -> Lender:
    """A lender by its public ID (LE-...) or its name."""
    return get_by_id(session, Lender, field, text)


def get_reference_material(session: Session, field: str, text: str) -> ReferenceMaterial:
    """A reference material by its public ID (RM-...) or its name."""
    return get_by_id(session, ReferenceMaterial, field, text)


def open_loan_ids() -> Select[int]:
    """The IDs of the open loans, as a subquery to restrict other statements by."""
    return select(Loan.id).where(Loan.status == LoanStatus.OPEN)
