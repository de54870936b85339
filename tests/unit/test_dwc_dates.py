"""Darwin Core dates read whole, against ISO 8601 and the TDWG term list's examples.

Sources: the Darwin Core term list (TDWG), eventDate's examples (``1963-03-08T14:07-0600``,
``2009-02-20T08:40Z``, ``2018-08-29T15:19``, ``1809-02-12``, ``1906-06``, ``1971``,
``2007-03-01T13:00:00Z/2008-05-11T15:30:00Z``, ``1900/1909``, ``2007-11-13/15``), from
memory; ISO 8601-1 for reduced precision, offsets and intervals. Expected spans are worked
out here by hand (a month's last day from the calendar), never read from tracker.
"""

from __future__ import annotations

from datetime import UTC, date, datetime

import pytest

from tracker.domain.dwc_dates import DateProblem, read_date

TODAY = date(2026, 12, 5)

# Darwin Core's eventDate examples -> (first day, last day) each covers
DARWIN_CORE_EXAMPLES = {
    "1963-03-08T14:07-0600": (date(1963, 3, 8), date(1963, 3, 8)),
    "2009-02-20T08:40Z": (date(2009, 2, 20), date(2009, 2, 20)),
    "2018-08-29T15:19": (date(2018, 8, 29), date(2018, 8, 29)),
    "1809-02-12": (date(1809, 2, 12), date(1809, 2, 12)),
    "1906-06": (date(1906, 6, 1), date(1906, 6, 30)),
    "1971": (date(1971, 1, 1), date(1971, 12, 31)),
    "2007-03-01T13:00:00Z/2008-05-11T15:30:00Z": (date(2007, 3, 1), date(2008, 5, 11)),
    "1900/1909": (date(1900, 1, 1), date(1909, 12, 31)),
    "2007-11-13/15": (date(2007, 11, 13), date(2007, 11, 15)),
}


@pytest.mark.parametrize(("text", "days"), DARWIN_CORE_EXAMPLES.items())
def test_every_darwin_core_example_reads(text: str, days: tuple[date, date]) -> None:
    span = read_date(text, TODAY)
    assert (span.first, span.last) == days


@pytest.mark.parametrize(
    ("text", "days"),
    [
        ("1937-01", (date(1937, 1, 1), date(1937, 1, 31))),
        ("1941", (date(1941, 1, 1), date(1941, 12, 31))),
        ("1900-02", (date(1900, 2, 1), date(1900, 2, 28))),  # 1900 is no leap year
        ("2000-02", (date(2000, 2, 1), date(2000, 2, 29))),  # 2000 is (divisible by 400)
        ("1990-01/1990-03", (date(1990, 1, 1), date(1990, 3, 31))),
        ("1990-01-05/12", (date(1990, 1, 5), date(1990, 1, 12))),  # shortened end: the day
        ("1990-01-05/02-03", (date(1990, 1, 5), date(1990, 2, 3))),  # month and day
        ("1990-01/03", (date(1990, 1, 1), date(1990, 3, 31))),  # year-month, end month
    ],
)
def test_reduced_precision_and_intervals_cover_their_days(
    text: str, days: tuple[date, date]
) -> None:
    span = read_date(text, TODAY)
    assert (span.first, span.last) == days


def test_an_offset_gives_the_instant() -> None:
    # ISO 8601: 14:07 at UTC-06:00 is 20:07 UTC
    span = read_date("1963-03-08T14:07-0600", TODAY)
    assert span.start == datetime(1963, 3, 8, 20, 7, tzinfo=UTC)
    assert read_date("1963-03-08T14:07-06:00", TODAY).start == span.start
    assert read_date("1963-03-08T14:07-06", TODAY).start == span.start
    assert read_date("1963-03-08T23:30+0530", TODAY).start == datetime(
        1963, 3, 8, 18, 0, tzinfo=UTC
    )


@pytest.mark.parametrize(
    "text",
    [
        "1930-04-01xyz",
        "12/03/1987",
        "1930-02-30",
        "1930-13",
        "19300401",
        "1930-W05",
        "1930-035",
        "1930-04-01T25:00",
        "1930T10:00",
        "1990/12",
        "1990-01-05/",
        "",
        " 1930",
    ],
)
def test_text_that_is_no_iso_8601_date_is_unreadable(text: str) -> None:
    with pytest.raises(DateProblem) as caught:
        read_date(text, TODAY)
    assert caught.value.unreadable


@pytest.mark.parametrize(
    "text", ["1990-03/1990-01", "1990-01-12/05", "2007-03-01T13:00Z/2007-03-01T12:59Z"]
)
def test_an_interval_that_ends_before_it_starts_is_refused(text: str) -> None:
    with pytest.raises(DateProblem) as caught:
        read_date(text, TODAY)
    assert not caught.value.unreadable and "ends before it starts" in caught.value.reason


def test_a_date_after_today_is_refused_and_today_is_said() -> None:
    for text in ("2026-12-06", "2027", "2026-12-06/2027-01", "2026-12-06T00:30Z"):
        with pytest.raises(DateProblem) as caught:
            read_date(text, TODAY)
        assert "2026-12-05" in caught.value.reason and not caught.value.unreadable
    # today itself, and an interval or a month that starts by today, are fine
    for text in ("2026-12-05", "2026-12", "2026", "2026-11-30/2027-01-01"):
        assert read_date(text, TODAY).first <= TODAY
