"""When an entry says it happened, against when it is recorded: the rules every dated entry keeps.

A bench entry may state when it happened (``drilled_at`` …) because notes are often typed
after the work. Three rules bound that freedom, here once for every service (and the bench's
bulk executor) to call:

* never in the future (beyond the workstations' clock drift, :data:`CLOCK_SKEW`);
* never before what it depends on (:func:`not_before`): a drill before its specimen was
  checked in, a dissolution before the drill, a check-in before the loan began;
* never further back than the lab's backdating window without a manager
  (:func:`is_backdated`): such an entry keeps both times and is flagged wherever the
  loan's books are shown.

The ledger's own ``at`` is always the recording time; the stated time is the entry's.
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass
from datetime import date, datetime, timedelta

from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.timeutil import as_utc, iso_utc

# Workstation clocks drift; a time this far ahead of the recording clock is still "now".
CLOCK_SKEW = timedelta(minutes=5)

# How far back an entry may be dated without a manager. Common practice is to type up the
# bench notes of the day before; a Friday's notes typed up any time on Monday are less than
# four days old (Friday 00:00 to Tuesday 00:00 is 96 hours). Four days lets that ordinary
# habit through and sends anything older — a week-old drill, a drill "remembered" from the
# day before a due date — to a manager, who answers for it and leaves it flagged.
DEFAULT_BACKDATING_WINDOW = timedelta(days=4)
# A window longer than this stops meaning anything: a lab that wants it switched off says so.
MAX_BACKDATING_WINDOW = timedelta(days=90)
MIN_BACKDATING_WINDOW = timedelta(hours=1)

Moment = datetime | date


@dataclass(frozen=True)
class Since:
    """Something an entry depends on, said for a person, and when it happened.

    ``at`` is None when it has not happened (a specimen not yet checked in): no bound then.
    A ``date`` (a loan's receipt, a batch's day) bounds the entry's day, not its hour.
    """

    what: str
    at: Moment | None


def stated_time(now: datetime, given: datetime | None, field: str) -> datetime:
    """When the entry happened: the given time (never in the future) or now."""
    if given is None:
        return now
    moment = as_utc(given)
    if moment > now + CLOCK_SKEW:
        raise InputError(field, iso_utc(moment), f"is in the future (now is {iso_utc(now)})")
    return moment


def not_before(
    field: str, moment: Moment, after: Iterable[Since], slack: timedelta = timedelta(0)
) -> None:
    """Refuse an entry dated before anything it depends on (exit 1).

    The refusal names the field, the value, what it depends on and that one's time.
    ``slack`` is for entries that state no time and take the recording clock's: what they
    depend on may have been stated up to :data:`CLOCK_SKEW` ahead of that clock.
    """
    for since in after:
        if since.at is not None and _before(moment, since.at, slack):
            raise RuleViolation(field, show(moment), f"is before {since.what} ({show(since.at)})")


def _before(moment: Moment, since: Moment, slack: timedelta) -> bool:
    if isinstance(moment, datetime) and isinstance(since, datetime):
        return as_utc(moment) + slack < as_utc(since)
    return day_of(moment) < day_of(since)


def day_of(moment: Moment) -> date:
    """The UTC day of a time (the day a loan's dates are compared in), or the day itself."""
    return as_utc(moment).date() if isinstance(moment, datetime) else moment


def show(moment: Moment) -> str:
    """A time in the ledger's ISO form, a day as YYYY-MM-DD."""
    return iso_utc(moment) if isinstance(moment, datetime) else moment.isoformat()


def is_backdated(now: datetime, stated: datetime, window: timedelta) -> bool:
    """Whether an entry stated at ``stated`` and recorded ``now`` is further back than allowed."""
    return now - as_utc(stated) > window


_WINDOW = re.compile(r"^\s*(\d{1,4})\s*(h|hours?|d|days?)\s*$", re.IGNORECASE)


def parse_window(text: str, field: str = "window") -> timedelta:
    """A backdating window written with its unit: "4 days", "36 h" (never a bare number)."""
    match = _WINDOW.match(text)
    if match is None:
        raise InputError(field, text, 'give a whole number of hours or days, e.g. "4 days"')
    count, unit = int(match.group(1)), match.group(2).lower()
    window = timedelta(days=count) if unit.startswith("d") else timedelta(hours=count)
    if not MIN_BACKDATING_WINDOW <= window <= MAX_BACKDATING_WINDOW:
        raise InputError(
            field,
            text,
            f"must lie between {describe_window(MIN_BACKDATING_WINDOW)} and "
            f"{describe_window(MAX_BACKDATING_WINDOW)}",
        )
    return window


def hours_of(window: timedelta) -> int:
    """A window in whole hours, as the lab's setting keeps it."""
    return int(window.total_seconds() // 3600)


def describe_window(window: timedelta) -> str:
    """A window as a person says it: whole days when it is whole days, else hours."""
    hours = hours_of(window)
    if hours % 24 == 0:
        days = hours // 24
        return f"{days} day" if days == 1 else f"{days} days"
    return f"{hours} hour" if hours == 1 else f"{hours} hours"
