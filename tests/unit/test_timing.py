"""The rules of dated entries (tracker.domain.timing) and the due date judged on the day a
drill is recorded (tracker.domain.allowance), on plain values worked by hand."""

from __future__ import annotations

from datetime import UTC, date, datetime, timedelta, timezone

import pytest

from tests.unit.test_allowance import FRESH, LIMITS
from tracker.domain.allowance import Recorded, check_drill
from tracker.domain.budget import by_difference
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.timing import (
    CLOCK_SKEW,
    Since,
    describe_window,
    is_backdated,
    not_before,
    parse_window,
    stated_time,
)

NOW = datetime(2026, 3, 10, 12, 0, tzinfo=UTC)


@pytest.mark.parametrize(
    ("text", "hours"),
    [("4 days", 96), ("1 day", 24), ("36 h", 36), ("1 hour", 1), ("90 d", 2160), ("2 DAYS", 48)],
)
def test_a_window_is_read_with_its_unit(text: str, hours: int) -> None:
    assert parse_window(text) == timedelta(hours=hours)


@pytest.mark.parametrize("text", ["4", "4 weeks", "four days", "0 h", "91 days", "-1 day", ""])
def test_a_window_without_a_unit_or_out_of_range_is_refused(text: str) -> None:
    with pytest.raises(InputError) as caught:
        parse_window(text)
    assert caught.value.field == "window" and caught.value.value == text


def test_windows_are_said_as_a_person_says_them() -> None:
    said = [describe_window(timedelta(hours=h)) for h in (1, 5, 24, 36, 96)]
    assert said == ["1 hour", "5 hours", "1 day", "36 hours", "4 days"]


def test_the_window_boundary_is_not_backdated() -> None:
    window = timedelta(days=4)
    assert not is_backdated(NOW, NOW - window, window)
    assert is_backdated(NOW, NOW - window - timedelta(microseconds=1), window)


def test_a_stated_time_may_lead_the_clock_by_the_skew_only() -> None:
    assert stated_time(NOW, None, "at") == NOW
    assert stated_time(NOW, NOW + CLOCK_SKEW, "at") == NOW + CLOCK_SKEW
    with pytest.raises(InputError, match="is in the future"):
        stated_time(NOW, NOW + CLOCK_SKEW + timedelta(seconds=1), "at")


def test_not_before_compares_times_and_utc_days() -> None:
    checked_in = Since("SP-1 was checked in", NOW)
    not_before("drilled-at", NOW, [checked_in])  # the same instant is fine
    with pytest.raises(RuleViolation) as caught:
        not_before("drilled-at", NOW - timedelta(seconds=1), [checked_in])
    assert caught.value.one_line() == (
        "drilled-at: '2026-03-10T11:59:59.000000Z': is before SP-1 was checked in "
        "(2026-03-10T12:00:00.000000Z)"
    )
    # 00:30 at UTC+2 is 22:30 UTC the day before: before a loan received on 2026-03-10
    received = Since("loan L was received", date(2026, 3, 10))
    with pytest.raises(RuleViolation, match=r"\(2026-03-10\)"):
        not_before(
            "received-at",
            datetime(2026, 3, 10, 0, 30, tzinfo=timezone(timedelta(hours=2))),
            [received],
        )
    not_before("received-at", datetime(2026, 3, 10, 0, 30, tzinfo=UTC), [received])
    not_before("drilled-at", NOW, [Since("not yet", None)])  # nothing to be after
    # an entry that states no time may trail what it depends on by the clock skew
    not_before("drilled-at", NOW, [Since("x", NOW + CLOCK_SKEW)], slack=CLOCK_SKEW)


def test_a_drill_recorded_after_the_due_date_is_overdue_whatever_day_it_states() -> None:
    due = LIMITS.due_on
    mass = by_difference(0.5, 0.001)
    day_before = due - timedelta(days=1)
    assert check_drill(LIMITS, FRESH, "enamel", mass, day_before) == []  # as before
    late = Recorded(due + timedelta(days=2), due)
    (found,) = check_drill(LIMITS, FRESH, "enamel", mass, day_before, late)
    assert found.limit == "due date" and f"recorded on {late.on.isoformat()}" in found.message
    extended = Recorded(due + timedelta(days=2), due + timedelta(days=30))  # an extension
    assert check_drill(LIMITS, FRESH, "enamel", mass, day_before, extended) == []
