"""The rules a loan's line is judged by: its flags and the order of the lines.

Reconciliation sums a loan's books in SQL (:mod:`tracker.services.read.reconcile`); what its
line then says about them (over or near the limit, due soon, powder to return) and the
order of the lines is decided here, once, for every caller (CLI, interface, reports).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date
from typing import Protocol

from tracker.domain.budget import as_float
from tracker.domain.models import Disposition, LoanStatus, LoanTerms

DUE_SOON_DAYS = 30
# A specimen with an entry a manager dated further back than the lab's backdating window.
BACKDATED = "backdated entry"


@dataclass(frozen=True, slots=True)
class Totals:
    """A loan's specimens summed: what its line shows (reconcile sums its specimens' books;
    the start-up glance reads the same sums from one grouped statement)."""

    specimens: int
    on_hand: int  # specimens held
    sampled: int
    drilled: float
    variance: float
    dissolved: float
    powder_on_hand: float
    returned: float
    most_drilled: float  # the largest drilled total of one specimen, for the per-specimen limit
    flags: frozenset[str]  # closure, override and backdating flags of any specimen
    powder_left: bool  # any powder still on hand, whatever its specimen's status


class Ranked(Protocol):
    """What the order of the lines looks at (a LoanLine)."""

    @property
    def status(self) -> str: ...

    @property
    def flags(self) -> list[str]: ...

    @property
    def days_left(self) -> int: ...

    @property
    def used_fraction(self) -> float | None: ...


def used_fraction(terms: LoanTerms, totals: Totals) -> float | None:
    """How much of the loan's total allowance is drilled (None: no total limit)."""
    limit = as_float(terms.max_total_mass_mg)
    return totals.drilled / limit if limit else None


def loan_flags(
    status: LoanStatus, terms: LoanTerms, today: date, totals: Totals, used: float | None
) -> list[str]:
    """The loan's flags: its specimens' closure flags plus the limits and the calendar."""
    flags = set(totals.flags)
    permitted = as_float(terms.max_mass_per_specimen_mg)
    if permitted is not None and totals.most_drilled > permitted:
        flags.add("over limit")  # a specimen over its own limit
    if used is not None and used > 1:
        flags.add("over limit")
    if status is LoanStatus.OPEN:
        days = (terms.due_on - today).days
        if days < 0:
            flags.add("overdue")
        elif days <= DUE_SOON_DAYS:
            flags.add("due within 30 days")
        if used is not None and 0.9 <= used <= 1:
            flags.add("near limit")
        if terms.powder_disposition is Disposition.RETURN and totals.powder_left:
            flags.add("powder to return")
    return sorted(flags)


def urgency(line: Ranked) -> tuple[int, int, int, float]:
    """Sort key: open loans first, then the most serious flags, the nearest due date, the
    fullest allowance."""
    closed = 0 if line.status == LoanStatus.OPEN.value else 1
    serious = -sum(f in ("over limit", "unaccounted material", "overdue") for f in line.flags)
    return (closed, serious, line.days_left, -(line.used_fraction or 0.0))
