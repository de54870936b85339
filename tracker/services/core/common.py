"""Small rules every service shares: action times, finishing a unit of work."""

from __future__ import annotations

from collections.abc import Callable, Iterable
from datetime import datetime, timedelta
from decimal import Decimal
from typing import Any, TypeVar

from pydantic import BaseModel

from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.models import (
    Loan,
    Location,
    Shipment,
    ShipmentDirection,
    Specimen,
    SpecimenStatus,
)
from tracker.domain.timing import (
    CLOCK_SKEW,
    Since,
    day_of,
    is_backdated,
    not_before,
    stated_time,
)
from tracker.domain.units import decimals_below
from tracker.domain.weighing import MassByDifference
from tracker.services.core.lookup import backdating_window, get_by_id
from tracker.services.core.uow import Backdating, Ref, UnitOfWork
from tracker.services.core.views import Done

V = TypeVar("V", bound=BaseModel)


def action_time(
    uow: UnitOfWork,
    given: datetime | None,
    field: str,
    after: Iterable[Since] = (),
    *,
    books: Specimen | None = None,
) -> datetime:
    """When the action happened: the given time or now, held to the rules of
    :mod:`tracker.domain.timing` — every service that takes a stated time calls this (fields
    that hold a day, not a time, call ``timing.not_before`` themselves).

    Refused when in the future (exit 2) or before anything in ``after`` (exit 1). A time
    further back than the lab's backdating window needs a manager (asked for by
    ``UnitOfWork.record``, after every other rule of the entry); it is then kept beside the
    recording time in the event's payload and in a ``BackdatedEntry`` row, and flagged on
    the lines of ``books`` (the specimen whose books it belongs to, if one).
    """
    moment = stated_time(uow.now, given, field)
    not_before(field, moment, after, CLOCK_SKEW if given is None else timedelta(0))
    if given is not None:
        window = backdating_window(uow.session)
        if is_backdated(uow.now, moment, window):  # the manager is asked for when recording
            uow.backdated = Backdating(field.replace("-", "_"), moment, window, books)
    return moment


def checked_in(specimen: Specimen) -> Since:
    """A specimen's check-in: nothing done to it in the lab can be older."""
    return Since(f"{specimen.public_id} was checked in", specimen.received_at)


def returned_after(specimen: Specimen) -> list[Since]:
    """A specimen goes back after it came in and after the last powder drilled from it."""
    drilled = max((p.drilled_at for p in specimen.powders), default=None)
    return [checked_in(specimen), Since(f"{specimen.public_id} was last drilled", drilled)]


def loan_began(loan: Loan) -> Since:
    """A loan's first day: its receipt, or the day it was recorded when none was given (the
    day its original terms take effect from)."""
    if loan.received_on is not None:
        return Since(f"loan {loan.reference} was received", loan.received_on)
    return Since(f"loan {loan.reference} was recorded", day_of(loan.created_at))


# Defaults when the form does not say (common practice): a microbalance reading to
# 0.001 mg for powders, an analytical balance reading to 0.1 mg (0.0001 g) for solutions.
MICROBALANCE_MG = Decimal("0.001")
ANALYTICAL_BALANCE_MG = Decimal("0.1")


def weigh(
    tare: Decimal, gross: Decimal, readability: Decimal, names: tuple[str, str] = ("tare", "gross")
) -> MassByDifference:
    """Check a tare/gross pair against the balance and return the mass by difference."""
    for name, value in zip(names, (tare, gross), strict=True):
        if decimals_below(value, readability):
            raise InputError(
                name, f"{value} mg", f"has more decimals than the balance reads ({readability} mg)"
            )
    if gross <= tare:
        raise InputError(names[1], f"{gross} mg", f"is not heavier than the tare ({tare} mg)")
    return MassByDifference(tare, gross, readability)


def optional_location(uow: UnitOfWork, field: str, text: str | None) -> Location | None:
    """The location an ID names, or None when the form left it empty."""
    return get_by_id(uow.session, Location, field, text) if text else None


def return_shipment(uow: UnitOfWork, text: str | None, loan_id: int) -> Shipment | None:
    """The outgoing shipment of this loan that a returned item travels in (if one is named)."""
    if text is None:
        return None
    shipment = get_by_id(uow.session, Shipment, "shipment", text)
    if shipment.loan_id != loan_id:
        raise RuleViolation("shipment", shipment.public_id, "belongs to another loan")
    if shipment.direction is not ShipmentDirection.OUTGOING:
        raise RuleViolation("shipment", shipment.public_id, "is an incoming shipment")
    uow.mention(shipment.public_id)
    return shipment


def require_on_hand(specimen: Specimen, field: str = "specimen") -> None:
    """Refuse to act on a specimen that is not physically in the lab."""
    if specimen.status is not SpecimenStatus.ON_HAND:
        state = specimen.status.value.replace("_", " ")
        raise RuleViolation(field, specimen.public_id, f"is {state}, not on hand")


def finish(
    uow: UnitOfWork,
    action: str,
    obj: Ref,
    payload: dict[str, Any],
    view: Callable[[], V],
    parent: Ref = None,
) -> Done[V]:
    """Record the unit's custody event, commit, and answer with the view and the event.

    ``view`` is called after the event is recorded (new rows then have their IDs)
    and before the commit ends the session.
    """
    event = uow.record(action, obj, payload, parent)
    answer = view()
    uow.commit()
    return Done[V](item=answer, event_seq=event.seq, event_hash=event.hash)
