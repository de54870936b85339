"""The allowance rule in isolation: which limits a drill would break, and what it says."""

from __future__ import annotations

from datetime import date

from tracker.domain.allowance import Limits, Usage, check_drill
from tracker.domain.budget import Amount, by_difference

LIMITS = Limits(
    ("enamel",),
    max_mass_per_specimen_mg=3.0,
    max_total_mass_mg=10.0,
    max_specimens_sampled=4,
    due_on=date(2027, 1, 31),
    version=2,
)
FRESH = Usage(
    Amount(0.0, 0.0), Amount(0.0, 0.0), sampled_specimens=0, specimen_already_sampled=False
)
TODAY = date(2026, 6, 1)


def test_within_every_limit() -> None:
    assert check_drill(LIMITS, FRESH, "enamel", by_difference(3.0, 0.001), TODAY) == []


def test_exactly_at_the_limit_is_allowed() -> None:
    used = Usage(Amount(7.0, 0.001), Amount(1.0, 0.0004), 3, True)
    assert check_drill(LIMITS, used, "enamel", by_difference(2.0, 0.001), TODAY) == []


def test_per_specimen_message_states_limit_used_requested_remaining() -> None:
    used = Usage(Amount(5.0, 0.0008), Amount(2.5, 0.0004), 2, True)
    found = check_drill(LIMITS, used, "enamel", by_difference(0.6, 0.001), TODAY)
    assert [v.limit for v in found] == ["per-specimen limit"]
    text = found[0].message
    # remaining = 3 − 2.5 = 0.5 mg; every amount is written with its uncertainty, which
    # (0.00040, 0.00041: leading digits 400, 408) keeps one significant digit
    for part in (
        "per-specimen limit 3 mg",
        "already drilled 2.5000 ± 0.0004 mg",
        "requested 0.6000 ± 0.0004 mg",
        "remaining 0.5000 ± 0.0004 mg",
    ):
        assert part in text


def test_every_broken_limit_is_listed() -> None:
    used = Usage(Amount(9.9, 0.001), Amount(0.0, 0.0), 4, False)
    found = check_drill(LIMITS, used, "dentine", by_difference(3.5, 0.001), date(2027, 2, 1))
    assert [v.limit for v in found] == [
        "tissue",
        "due date",
        "per-specimen limit",
        "loan total limit",
        "specimen count",
    ]
    assert "permits only enamel, not dentine" in found[0].message
    assert "2027-01-31" in found[1].message


def test_a_specimen_already_sampled_does_not_count_again() -> None:
    used = Usage(Amount(4.0, 0.001), Amount(1.0, 0.0004), 4, True)
    assert check_drill(LIMITS, used, "enamel", by_difference(1.0, 0.001), TODAY) == []


def test_loans_without_limits() -> None:
    open_loan = Limits(("shell",), None, None, None, date(2030, 1, 1), 1)
    heavy = Usage(Amount(500.0, 0.01), Amount(200.0, 0.01), 99, False)
    assert check_drill(open_loan, heavy, "shell", by_difference(50.0, 0.01), TODAY) == []
