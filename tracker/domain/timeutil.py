"""Timezone-aware UTC time: the only kind of timestamp the ledger accepts."""

from __future__ import annotations

from collections.abc import Callable
from datetime import UTC, date, datetime

Clock = Callable[[], datetime]


def utcnow() -> datetime:
    """Current time, aware, in UTC."""
    return datetime.now(UTC)


def as_utc(moment: datetime) -> datetime:
    """Convert an aware datetime to UTC; refuse naive ones (they hide their zone)."""
    if moment.tzinfo is None or moment.utcoffset() is None:
        raise ValueError("timestamp has no time zone")
    return moment.astimezone(UTC)


def iso_utc(moment: datetime) -> str:
    """ISO 8601 in UTC with microseconds and a ``Z``: the ledger's time format."""
    return as_utc(moment).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


def days_between(start: date, end: date) -> int:
    return (end - start).days
