"""Which version of a loan's terms is in force on a day (no database needed)."""

from __future__ import annotations

from datetime import date

import pytest

from tracker.domain.models import LoanTerms
from tracker.domain.terms import terms_in_force


def _terms(version: int, effective_from: date) -> LoanTerms:
    return LoanTerms(version=version, effective_from=effective_from, permitted_tissues=["enamel"])


ORIGINAL = _terms(1, date(2026, 1, 10))
AMENDED = _terms(2, date(2026, 3, 1))
EXTENDED = _terms(3, date(2026, 6, 15))
ALL = [EXTENDED, ORIGINAL, AMENDED]  # deliberately not in version order


@pytest.mark.parametrize(
    ("day", "expected"),
    [
        (date(2026, 1, 10), ORIGINAL),  # on the effective day itself
        (date(2026, 2, 28), ORIGINAL),
        (date(2026, 3, 1), AMENDED),
        (date(2026, 6, 14), AMENDED),
        (date(2026, 6, 15), EXTENDED),
        (date(2030, 1, 1), EXTENDED),
    ],
)
def test_newest_version_effective_on_or_before_the_day(day: date, expected: LoanTerms) -> None:
    assert terms_in_force(ALL, day) is expected


def test_before_any_version_the_original_applies() -> None:
    assert terms_in_force(ALL, date(2025, 12, 31)) is ORIGINAL


def test_amendment_effective_back_dated() -> None:
    # a later version may take effect from an earlier date; it then replaces version 2
    back_dated = _terms(3, date(2026, 2, 1))
    assert terms_in_force([ORIGINAL, AMENDED, back_dated], date(2026, 2, 15)) is back_dated
    assert terms_in_force([ORIGINAL, AMENDED, back_dated], date(2026, 3, 15)) is back_dated
    assert terms_in_force([ORIGINAL, AMENDED, back_dated], date(2026, 1, 20)) is ORIGINAL


def test_single_version() -> None:
    assert terms_in_force([ORIGINAL], date(2026, 5, 5)) is ORIGINAL


def test_no_versions_refused() -> None:
    with pytest.raises(ValueError, match="original terms"):
        terms_in_force([], date(2026, 5, 5))
