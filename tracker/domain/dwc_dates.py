"""Darwin Core dates read whole, in the ISO 8601 forms the standard allows.

Darwin Core (TDWG term list, eventDate: "a date-time or interval during which a
dwc:Event occurred", with examples ``1963-03-08T14:07-0600``, ``2009-02-20T08:40Z``,
``2018-08-29T15:19``, ``1809-02-12``, ``1906-06``, ``1971``,
``2007-03-01T13:00:00Z/2008-05-11T15:30:00Z``, ``1900/1909``, ``2007-11-13/15``)
takes a date of reduced precision (year, year-month), a full date, a date-time with
an optional offset (``Z``, ``+hh``, ``+hhmm``, ``+hh:mm``), or an interval of two of
them joined by ``/``. An interval's end may be shortened: it gives only its last
parts and takes the rest from the start (``1990-01-05/12`` is 5 to 12 January 1990,
``1990-01/03`` January to March 1990), as ISO 8601 allows.

Not accepted: week dates (``1990-W05``), ordinal dates (``1990-035``), the basic
format without hyphens (``19900105``), durations (``P1M``) and open intervals
(``1990/..``): they are rare in specimen lists and easily misread.

A reading keeps nothing but what the checks need: the first and last day the text
covers. The text itself is kept as given by the caller.
"""

from __future__ import annotations

import calendar
import re
from dataclasses import dataclass
from datetime import UTC, date, datetime, timedelta, timezone

_DATE = r"(?P<year>\d{4})(?:-(?P<month>\d{2})(?:-(?P<day>\d{2}))?)?"
_TIME = (
    r"T(?P<hour>\d{2})(?::(?P<minute>\d{2})(?::(?P<second>\d{2})(?:[.,]\d+)?)?)?"
    r"(?P<zone>Z|[+-]\d{2}(?::?\d{2})?)?"
)
_POINT = re.compile(f"{_DATE}(?:{_TIME})?")
_SHORT_END = re.compile(r"\d{2}(?:-\d{2})?")  # an interval's shortened end: dd or mm-dd
FORMS = "1937, 1937-01, 1937-01-05, 1963-03-08T14:07-0600, or an interval 1990-01/1990-03"


class DateProblem(ValueError):
    """Why a date's text is refused.

    ``unreadable`` is True when the text is no ISO 8601 date at all (a legacy form such
    as 12/03/1987, or 1930-02-30); False when it reads but cannot be right (an interval
    that ends before it starts, a date after today).
    """

    def __init__(self, reason: str, *, unreadable: bool) -> None:
        super().__init__(reason)
        self.reason = reason
        self.unreadable = unreadable


@dataclass(frozen=True)
class Span:
    """The days a date's text covers (both ends included); instants when a time is given."""

    first: date
    last: date
    start: datetime | None = None  # the instant, in UTC, when the text gives a time with a zone
    end: datetime | None = None


def read_date(text: str, today: date) -> Span:
    """The days ``text`` covers, or a DateProblem saying why it is refused.

    ``today`` is the last day a date may start on (a specimen cannot have been
    collected, identified or georeferenced tomorrow).
    """
    if len(text) == 10 and text[4] == text[7] == "-" and text.isascii():  # a day, the usual
        try:
            day = date.fromisoformat(text)  # read directly: most cells are days
        except ValueError:
            raise _unreadable() from None
        if day > today:
            raise _after(today)
        return Span(day, day)
    start_text, slash, end_text = text.partition("/")
    start = _point(start_text)
    span = start
    if slash:
        end = _point(_expanded(end_text, start_text))
        _check_order(start, end)
        span = Span(start.first, end.last, start.start, end.end)
    if span.first > today or (span.start is not None and span.start.date() > today):
        raise _after(today)
    return span


def _after(today: date) -> DateProblem:
    return DateProblem(f"starts after today ({today.isoformat()})", unreadable=False)


def _unreadable() -> DateProblem:
    return DateProblem(
        f"is not an ISO 8601 date as Darwin Core takes it ({FORMS})", unreadable=True
    )


def _point(part: str) -> Span:
    """One date or date-time: the days it covers, and its instant when it has a zone."""
    found = _POINT.fullmatch(part)
    if found is None:
        raise _unreadable()
    year, month, day = (int(found[k]) if found[k] else None for k in ("year", "month", "day"))
    assert year is not None  # the pattern requires it
    if found["hour"] is not None and day is None:
        raise _unreadable()  # a time needs a full date
    try:
        first = date(year, month or 1, day or 1)
        last = date(
            year,
            month or 12,
            day or calendar.monthrange(year, month or 12)[1],
        )
        moment = _moment(found, first)
    except ValueError:  # month 13, 30 February, hour 25 ...
        raise _unreadable() from None
    return Span(first, last, moment, moment)


def _moment(found: re.Match[str], day: date) -> datetime | None:
    """The instant a date-time names, in UTC, when it gives its zone; else None."""
    if found["hour"] is None:
        return None
    local = datetime(
        day.year,
        day.month,
        day.day,
        int(found["hour"]),
        int(found["minute"] or 0),
        int(found["second"] or 0),
    )
    zone = found["zone"]
    if zone is None:
        return None  # local time of an unknown zone: only its day is known
    if zone == "Z":
        return local.replace(tzinfo=UTC)
    digits = zone[1:].replace(":", "")
    offset = timedelta(hours=int(digits[:2]), minutes=int(digits[2:] or 0))
    return local.replace(tzinfo=timezone(-offset if zone[0] == "-" else offset)).astimezone(UTC)


def _expanded(end: str, start: str) -> str:
    """An interval's end with the parts it leaves out taken from its start (``1990-01-05/12``)."""
    if not _SHORT_END.fullmatch(end):
        return end
    date_part = start.split("T")[0]
    parts = date_part.split("-")
    given = end.split("-")
    if len(given) >= len(parts):  # "1990/12" is not a shortened end: the year is never left out
        raise _unreadable()
    return "-".join(parts[: len(parts) - len(given)] + given)


def _check_order(start: Span, end: Span) -> None:
    if start.start is not None and end.end is not None:
        reversed_ = end.end < start.start
    else:
        reversed_ = end.last < start.first
    if reversed_:
        raise DateProblem("is an interval that ends before it starts", unreadable=False)
