"""The rules a loan's line is judged by — flags, urgency — on plain values.

Reconciliation sums a loan's books in SQL (:mod:`tracker.services.reconcile`); what its
line then says about them (over or near the limit, due soon, powder to return) and the
order of the lines is decided here, once. This module loads neither SQLAlchemy nor
pydantic: the first screen's glance (:mod:`tracker.services.glance`) judges its lines
with exactly these rules before either has loaded.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date
from typing import Any, Protocol

from tracker.domain.vocab import Disposition, LoanStatus

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


NO_TOTALS = Totals(0, 0, 0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, frozenset(), False)


@dataclass(frozen=True, slots=True)
class Terms:
    """The terms in force that a loan's line is judged by."""

    version: int
    permitted_tissues: list[str]
    max_mass_per_specimen_mg: float | None
    max_total_mass_mg: float | None
    max_specimens_sampled: int | None
    due_on: date
    powder_disposition: Disposition


@dataclass(frozen=True, slots=True)
class LoanFacts:
    """What a loan's line names: the loan, its lender and the terms in force."""

    id: str
    reference: str
    status: LoanStatus
    lender: str
    lender_code: str
    terms: Terms


class Ranked(Protocol):
    """What the order of the lines looks at (a LoanLine, or an OverviewLine)."""

    @property
    def status(self) -> str: ...

    @property
    def flags(self) -> list[str]: ...

    @property
    def days_left(self) -> int: ...

    @property
    def used_fraction(self) -> float | None: ...


def used_fraction(terms: Terms, totals: Totals) -> float | None:
    """How much of the loan's total allowance is drilled (None: no total limit)."""
    return totals.drilled / terms.max_total_mass_mg if terms.max_total_mass_mg else None


@dataclass(frozen=True, slots=True)
class OverviewLine:
    """What the overview shows of a loan: the part of its LoanLine the glance can give too."""

    id: str
    reference: str
    lender_code: str
    status: str
    drilled_mg: float
    max_total_mass_mg: float | None
    used_fraction: float | None
    due_on: date
    days_left: int
    sampled: int
    specimens: int
    on_hand: int
    flags: list[str]


def overview_line(loan: LoanFacts, today: date, totals: Totals) -> OverviewLine:
    """A loan judged on ``today``: its allowance used, days left and flags."""
    terms, used = loan.terms, used_fraction(loan.terms, totals)
    return OverviewLine(
        id=loan.id,
        reference=loan.reference,
        lender_code=loan.lender_code,
        status=loan.status.value,
        drilled_mg=totals.drilled,
        max_total_mass_mg=terms.max_total_mass_mg,
        used_fraction=used,
        due_on=terms.due_on,
        days_left=(terms.due_on - today).days,
        sampled=totals.sampled,
        specimens=totals.specimens,
        on_hand=totals.on_hand,
        flags=loan_flags(loan, today, totals, used),
    )


def loan_flags(loan: LoanFacts, today: date, totals: Totals, used: float | None) -> list[str]:
    """The loan's flags: its specimens' closure flags plus the limits and the calendar."""
    terms = loan.terms
    flags = set(totals.flags)
    permitted = terms.max_mass_per_specimen_mg
    if permitted is not None and totals.most_drilled > permitted:
        flags.add("over limit")  # a specimen over its own limit
    if used is not None and used > 1:
        flags.add("over limit")
    if loan.status is LoanStatus.OPEN:
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


def totals_from_row(row: Sequence[Any]) -> tuple[int, Totals]:
    """A loan's ID and totals from one row of the grouped statement over its specimens'
    books (reconcile's ``_totals_statement``), however that row was read."""
    (
        loan,
        count,
        holding,
        sampled,
        drilled,
        variance,
        dissolved,
        on_hand,
        returned,
        most,
        override,
        unaccounted,
        missing,
        powder_left,
        backdated,
    ) = row
    flags = {
        "override used": override,
        "unaccounted material": unaccounted,
        "missing weighing": missing,
        BACKDATED: backdated,
    }
    totals = Totals(
        count,
        holding,
        sampled,
        drilled,
        variance,
        dissolved,
        on_hand,
        returned,
        most,
        frozenset(name for name, seen in flags.items() if seen),
        bool(powder_left),
    )
    return loan, totals
