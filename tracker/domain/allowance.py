"""Loan allowances: is this drill within the terms in force, and if not, by how much?

Pure: the caller supplies the terms in force at the drill's time and what the loan
and the specimen have already given. Limits are the lender's numbers, so the
comparison is on the measured values; the message carries the uncertainties so a
person can judge a case at the edge.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

from tracker.domain.budget import Amount
from tracker.domain.precision import value_u


@dataclass(frozen=True)
class Usage:
    """What a loan has given so far, and what the specimen in question has given."""

    loan_drilled: Amount  # mg
    specimen_drilled: Amount  # mg
    sampled_specimens: int
    specimen_already_sampled: bool


@dataclass(frozen=True)
class Limits:
    permitted_tissues: tuple[str, ...]
    max_mass_per_specimen_mg: float | None
    max_total_mass_mg: float | None
    max_specimens_sampled: int | None
    due_on: date
    version: int


@dataclass(frozen=True)
class Recorded:
    """The day a drill is recorded and the due date of the terms in force on that day.

    The stated day chooses the terms every limit is judged by; the due date is judged on
    both days, so a drill typed in after the due date is overdue even when it is dated
    before it (nobody can check the stated day; the recording day is the clock's).
    """

    on: date
    due_on: date


@dataclass(frozen=True)
class Violation:
    """One exceeded limit, said in full: the limit, used, requested, remaining."""

    limit: str
    message: str


def _mg(amount: Amount) -> str:
    return value_u(amount.value, amount.u, "mg")


def _overdue(limits: Limits, on: date, recorded: Recorded | None) -> Violation | None:
    if on > limits.due_on:
        due = limits.due_on.isoformat()
        return Violation("due date", f"the loan was due on {due} (record an extension first)")
    if recorded is not None and recorded.on > recorded.due_on:
        return Violation(
            "due date",
            f"the loan was due on {recorded.due_on.isoformat()} and this drill is recorded on "
            f"{recorded.on.isoformat()}: dated {on.isoformat()}, it is still recorded late "
            "(record an extension first)",
        )
    return None


def _mass_limit(name: str, limit: float, used: Amount, request: Amount) -> Violation | None:
    if used.value + request.value <= limit:
        return None
    left = Amount(limit - used.value, used.u)
    return Violation(
        name,
        f"{name} {limit:g} mg: already drilled {_mg(used)}, requested "
        f"{_mg(request)}, remaining {_mg(left)}",
    )


def check_drill(
    limits: Limits,
    usage: Usage,
    tissue: str,
    request: Amount,
    on: date,
    recorded: Recorded | None = None,
) -> list[Violation]:
    """Every limit this drill would break (empty when it is within the terms).

    ``limits`` are the terms in force on ``on``, the drill's stated day; ``recorded`` (when
    given) adds the due date judged on the day the drill is recorded.
    """
    found: list[Violation] = []
    if tissue not in limits.permitted_tissues:
        allowed = ", ".join(limits.permitted_tissues)
        found.append(Violation("tissue", f"the loan permits only {allowed}, not {tissue}"))
    overdue = _overdue(limits, on, recorded)
    found += [overdue] if overdue else []
    if limits.max_mass_per_specimen_mg is not None:
        v = _mass_limit(
            "per-specimen limit", limits.max_mass_per_specimen_mg, usage.specimen_drilled, request
        )
        found += [v] if v else []
    if limits.max_total_mass_mg is not None:
        v = _mass_limit("loan total limit", limits.max_total_mass_mg, usage.loan_drilled, request)
        found += [v] if v else []
    if (
        limits.max_specimens_sampled is not None
        and not usage.specimen_already_sampled
        and usage.sampled_specimens + 1 > limits.max_specimens_sampled
    ):
        found.append(
            Violation(
                "specimen count",
                f"specimen count limit {limits.max_specimens_sampled}: already sampled "
                f"{usage.sampled_specimens}, this would be one more",
            )
        )
    return found
