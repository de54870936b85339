"""Reconciliation: for every loan and specimen, where every milligram went.

Per powder the books must close: drilled = dissolved + residual (what left the
lab, weighed) — or, while the vial is still open, the remainder is powder to
return. A gap larger than measurement can explain (max of k·u and the balances'
rounding bound, as in :mod:`tracker.domain.budget`) is *unaccounted material*;
a vial that left the lab unweighed is a *missing weighing*. Totals come from
SQL aggregates so the whole lab reconciles in one pass.
"""

from __future__ import annotations

import math
from collections import defaultdict
from dataclasses import dataclass
from datetime import date
from typing import Any

from pydantic import Field, TypeAdapter
from sqlalchemy import Select, and_, case, func, select
from sqlalchemy.orm import Session, selectinload

from tracker.db.database import Database
from tracker.domain.budget import COVERAGE_FACTOR, SQRT6
from tracker.domain.ids import Kind, format_id
from tracker.domain.models import (
    Aliquot,
    ContainerStatus,
    Disposition,
    Loan,
    LoanStatus,
    Powder,
    Solution,
    Specimen,
    SpecimenStatus,
)
from tracker.domain.terms import terms_in_force
from tracker.services.bulk import collector_paused
from tracker.services.lookup import get_loan
from tracker.services.views import View

DUE_SOON_DAYS = 30
_OPEN = ContainerStatus.AVAILABLE.value
_CLOSED = [s.value for s in ContainerStatus if s is not ContainerStatus.AVAILABLE]


class SpecimenLine(View):
    id: str
    catalog_number: str
    status: str
    powders: int
    drilled_mg: float
    drilled_u_mg: float
    permitted_mg: float | None
    dissolved_mg: float
    powder_on_hand_mg: float
    powder_returned_mg: float
    flags: list[str]


class LoanLine(View):
    id: str
    reference: str
    lender: str
    lender_code: str
    status: str
    terms_version: int
    permitted_tissues: list[str]
    max_mass_per_specimen_mg: float | None
    max_total_mass_mg: float | None
    max_specimens_sampled: int | None
    specimens: int
    on_hand: int
    sampled: int
    drilled_mg: float
    drilled_u_mg: float
    used_fraction: float | None
    dissolved_mg: float
    powder_on_hand_mg: float
    powder_returned_mg: float
    due_on: date
    days_left: int
    flags: list[str]
    specimen_lines: list[SpecimenLine] = Field(default_factory=list)


@dataclass(frozen=True, slots=True)
class _Books:
    """One specimen's books, as one row of the aggregate reads them."""

    id: int
    loan_id: int
    catalog_number: str
    status: SpecimenStatus
    powders: int
    drilled: float
    variance: float
    dissolved: float
    on_hand: float
    returned: float
    flags: frozenset[str]  # closure and override flags; the loan's limit is judged later


@dataclass(frozen=True, slots=True)
class _Totals:
    """A loan's specimens summed: what its line shows, whether from the specimens' books in
    Python or from one grouped statement (the overview's path)."""

    specimens: int
    on_hand: int  # specimens held
    sampled: int
    drilled: float
    variance: float
    dissolved: float
    powder_on_hand: float
    returned: float
    most_drilled: float  # the largest drilled total of one specimen, for the per-specimen limit
    flags: frozenset[str]  # closure and override flags of any specimen
    powder_left: bool  # any powder still on hand, whatever its specimen's status


_EMPTY = _Totals(0, 0, 0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, frozenset(), False)


def _totals_of(books: list[_Books]) -> _Totals:
    """A loan's totals summed in Python from its specimens' books (the detailed path)."""
    drilled = variance = dissolved = on_hand = returned = most = 0.0
    holding = sampled = 0
    flags: set[str] = set()
    for b in books:
        drilled += b.drilled
        variance += b.variance
        dissolved += b.dissolved
        on_hand += b.on_hand
        returned += b.returned
        most = max(most, b.drilled)
        holding += b.status is SpecimenStatus.ON_HAND
        sampled += b.powders > 0
        flags |= b.flags
    flags.discard("powder on hand")
    return _Totals(len(books), holding, sampled, drilled, variance, dissolved, on_hand, returned,
                   most, frozenset(flags), any(b.on_hand > 0 for b in books))  # fmt: skip


def reconcile(db: Database, loan: str | None = None, *, specimens: bool = True) -> list[LoanLine]:
    """One line per loan (most urgent first), each with its specimens unless asked not to.

    Every specimen's books come from one aggregate statement over the powders, solutions
    and aliquots, so reconciling the whole lab is one pass over its tables.
    """
    today = db.clock().date()
    with db.read_session() as session, collector_paused():  # 20,000 lines: no cycles to find
        query = select(Loan).options(selectinload(Loan.terms), selectinload(Loan.lender))
        if loan is not None:
            query = query.where(Loan.id == get_loan(session, "loan", loan).id)
        loans = session.scalars(query).all()
        only = loans[0].id if loan is not None and loans else None
        if specimens:
            books = _books(session, only)
            lines = [_loan_line(row, today, _totals_of(books.get(row.id, [])),
                                books.get(row.id, [])) for row in loans]  # fmt: skip
        else:
            totals = _loan_totals(session, only)
            lines = [_loan_line(row, today, totals.get(row.id, _EMPTY)) for row in loans]
    return sorted(lines, key=_urgency)


def _beyond(square: Any, limit: Any) -> Any:
    """SQL for "square > limit" that ignores float noise (0.002000000000000224 vs 0.002)."""
    return square > limit * (1 + 1e-9) + 1e-18


def _solution_books() -> Any:
    """Per powder: what its solutions took, and how many of them fail to close.

    A solution closes when solution = aliquots + residual (once the vial has left) within
    max(k·u, the balances' rounding bound), compared in squares (SQLite has no sqrt).
    """
    taken = (
        select(Aliquot.solution_id.label("sid"), func.sum(Aliquot.mass_g).label("mass"),
               func.sum(Aliquot.mass_u_g * Aliquot.mass_u_g).label("var"),
               func.sum(Aliquot.mass_u_g).label("u_sum"))
        .group_by(Aliquot.solution_id).subquery()
    )  # fmt: skip
    gap = (
        Solution.solution_mass_g
        - func.coalesce(taken.c.mass, 0.0)
        - func.coalesce(Solution.residual_g, 0.0)
    )
    variance = (
        Solution.solution_mass_u_g * Solution.solution_mass_u_g
        + func.coalesce(taken.c.var, 0.0)
        + func.coalesce(Solution.residual_u_g * Solution.residual_u_g, 0.0)
    )
    bound = SQRT6 * (
        Solution.solution_mass_u_g
        + func.coalesce(taken.c.u_sum, 0.0)
        + func.coalesce(Solution.residual_u_g, 0.0)
    )
    off = and_(Solution.status.in_(_CLOSED), _beyond(gap * gap, COVERAGE_FACTOR**2 * variance),
               _beyond(gap * gap, bound * bound))  # fmt: skip
    return (
        select(
            Solution.powder_id.label("powder_id"),
            func.sum(Solution.powder_mass_mg).label("mass"),
            func.sum(Solution.powder_mass_u_mg * Solution.powder_mass_u_mg).label("var"),
            func.sum(Solution.powder_mass_u_mg).label("u_sum"),
            func.sum(case((and_(off, Solution.residual_g.is_(None)), 1), else_=0)).label("lost"),
            func.sum(case((and_(off, Solution.residual_g.is_not(None)), 1), else_=0)).label("gap"),
        )
        .outerjoin(taken, taken.c.sid == Solution.id)
        .group_by(Solution.powder_id)
        .subquery()
    )


def _per_powder() -> Select[Any]:
    """One row per powder: drilled, dissolved, residual and the closure test's ingredients.

    Per powder the books must close: drilled = dissolved + residual (what left the lab,
    weighed); a gap beyond max(k·u, the rounding bound) is unaccounted material, a vial
    that left unweighed with such a gap is a missing weighing.
    """
    taken = _solution_books()
    dissolved = func.coalesce(taken.c.mass, 0.0)
    residual = func.coalesce(Powder.residual_mg, 0.0)
    gap = Powder.mass_mg - dissolved - residual
    variance = (
        Powder.mass_u_mg * Powder.mass_u_mg
        + func.coalesce(taken.c.var, 0.0)
        + func.coalesce(Powder.residual_u_mg * Powder.residual_u_mg, 0.0)
    )
    bound = (
        Powder.readability_mg
        + SQRT6 * func.coalesce(taken.c.u_sum, 0.0)
        + SQRT6 * func.coalesce(Powder.residual_u_mg, 0.0)
    )
    closed = Powder.status.in_(_CLOSED)
    outside = and_(
        _beyond(gap * gap, COVERAGE_FACTOR**2 * variance), _beyond(gap * gap, bound * bound)
    )
    unweighed = and_(
        Powder.status.in_(["returned", "destroyed", "retained"]),
        Powder.residual_mg.is_(None),
        _beyond(gap * gap, bound * bound),
    )
    return (
        select(
            Powder.specimen_id, Powder.mass_mg, Powder.mass_u_mg, dissolved.label("dissolved"),
            case((Powder.status == _OPEN, Powder.mass_mg - dissolved), else_=0.0).label("on_hand"),
            case((Powder.status == "returned", func.coalesce(Powder.residual_mg, gap + residual)),
                 else_=0.0).label("returned"),
            case((Powder.override_reason.is_not(None), 1), else_=0).label("override"),
            case((and_(closed, outside, ~unweighed), 1), else_=0).label("unaccounted"),
            case((unweighed, 1), else_=0).label("unweighed"),
            func.coalesce(taken.c.lost, 0).label("solution_lost"),
            func.coalesce(taken.c.gap, 0).label("solution_gap"),
        )
        .outerjoin(taken, taken.c.powder_id == Powder.id)
    )  # fmt: skip


def _books(session: Session, loan_id: int | None) -> dict[int, list[_Books]]:
    """Every specimen's books (of one loan, or of all), grouped by loan, in specimen order."""
    grouped: dict[int, list[_Books]] = defaultdict(list)
    query = _per_specimen(loan_id).order_by(Specimen.id)
    for row in session.connection().execute(query).all():  # fetchall: one call, not one per row
        grouped[row[1]].append(_books_of(row))
    return grouped


def _loan_totals(session: Session, loan_id: int | None) -> dict[int, _Totals]:
    """Every loan's totals in one grouped statement over the specimens' books: what the
    overview needs, without turning 20,000 specimens into Python objects first."""
    ps = _per_specimen(loan_id).subquery()
    query = select(
        ps.c.loan_id, func.count(), _count(ps.c.status == SpecimenStatus.ON_HAND),
        _count(ps.c.powders > 0),
        *(func.sum(func.coalesce(ps.c[name], 0.0))
          for name in ("mass", "var", "dissolved", "on_hand", "returned")),
        func.max(func.coalesce(ps.c.mass, 0.0)), _count(ps.c.override > 0),
        _count((ps.c.unaccounted > 0) | (ps.c.gap > 0)),
        _count((ps.c.unweighed > 0) | (ps.c.lost > 0)), _count(ps.c.on_hand > 0),
    ).group_by(ps.c.loan_id)  # fmt: skip
    found: dict[int, _Totals] = {}
    for row in session.connection().execute(query).all():
        (loan, count, holding, sampled, drilled, variance, dissolved, on_hand, returned, most,
         override, unaccounted, missing, powder_left) = row  # fmt: skip
        flags = {"override used": override, "unaccounted material": unaccounted,
                 "missing weighing": missing}  # fmt: skip
        found[loan] = _Totals(
            count, holding, sampled, drilled, variance, dissolved, on_hand, returned, most,
            frozenset(name for name, seen in flags.items() if seen), bool(powder_left),
        )  # fmt: skip
    return found


def _count(condition: Any) -> Any:
    """SQL: how many rows of the group meet ``condition``."""
    return func.sum(case((condition, 1), else_=0))


def _per_specimen(loan_id: int | None) -> Select[Any]:
    """One row per specimen (of one loan, or of all): its powders' sums and flag counts."""
    rows = _per_powder()
    if loan_id is not None:
        mine = select(Specimen.id).where(Specimen.loan_id == loan_id)
        rows = rows.where(Powder.specimen_id.in_(mine))
    per = rows.subquery()
    sums = select(
        per.c.specimen_id, func.count().label("powders"), func.sum(per.c.mass_mg).label("mass"),
        func.sum(per.c.mass_u_mg * per.c.mass_u_mg).label("var"),
        func.sum(per.c.dissolved).label("dissolved"), func.sum(per.c.on_hand).label("on_hand"),
        func.sum(per.c.returned).label("returned"), func.sum(per.c.override).label("override"),
        func.sum(per.c.unaccounted).label("unaccounted"),
        func.sum(per.c.unweighed).label("unweighed"),
        func.sum(per.c.solution_lost).label("lost"), func.sum(per.c.solution_gap).label("gap"),
    ).group_by(per.c.specimen_id).subquery()  # fmt: skip
    query = select(
        Specimen.id, Specimen.loan_id, Specimen.catalog_number, Specimen.status,
        *(sums.c[name] for name in _SUM_COLUMNS),
    ).outerjoin(sums, sums.c.specimen_id == Specimen.id)  # fmt: skip
    if loan_id is not None:
        query = query.where(Specimen.loan_id == loan_id)
    return query


_SUM_COLUMNS = ("powders", "mass", "var", "dissolved", "on_hand", "returned", "override",
                "unaccounted", "unweighed", "lost", "gap")  # fmt: skip
_NO_FLAGS: frozenset[str] = frozenset()


def _books_of(row: Any) -> _Books:
    specimen, loan_id, catalog, status, powders, mass, var, dissolved, on_hand, returned = row[:10]
    if not powders:  # listed, never drilled
        return _Books(specimen, loan_id, catalog, status, 0, 0.0, 0.0, 0.0, 0.0, 0.0, _NO_FLAGS)
    override, unaccounted, unweighed, lost, gap = row[10:]
    flags = _NO_FLAGS
    if override or unaccounted or unweighed or lost or gap or on_hand > 0:
        found = set()
        if override:
            found.add("override used")
        if unaccounted or gap:
            found.add("unaccounted material")
        if unweighed or lost:
            found.add("missing weighing")
        if on_hand > 0 and status is not SpecimenStatus.EXPECTED:
            found.add("powder on hand")
        flags = frozenset(found)
    return _Books(specimen, loan_id, catalog, status, powders, mass, var, dissolved, on_hand,
                  returned, flags)  # fmt: skip


def _loan_line(
    loan: Loan, today: date, totals: _Totals, books: list[_Books] | None = None
) -> LoanLine:
    """A loan's line from its totals; with its specimens' lines when their books are given."""
    terms = terms_in_force(loan.terms, today)
    permitted = terms.max_mass_per_specimen_mg
    used = totals.drilled / terms.max_total_mass_mg if terms.max_total_mass_mg else None
    flags = _loan_flags(loan, terms, today, totals, permitted, used)
    lines = _SPECIMEN_LINES.validate_python(
        [_specimen_line(b, _specimen_flags(b, permitted), permitted) for b in books or []]
    )
    return LoanLine(
        id=loan.public_id, reference=loan.reference, lender=loan.lender.name,
        lender_code=loan.lender.institution_code or loan.lender.name, status=loan.status.value,
        terms_version=terms.version, permitted_tissues=list(terms.permitted_tissues),
        max_mass_per_specimen_mg=terms.max_mass_per_specimen_mg,
        max_total_mass_mg=terms.max_total_mass_mg,
        max_specimens_sampled=terms.max_specimens_sampled, specimens=totals.specimens,
        on_hand=totals.on_hand, sampled=totals.sampled, drilled_mg=totals.drilled,
        drilled_u_mg=math.sqrt(totals.variance), used_fraction=used,
        dissolved_mg=totals.dissolved, powder_on_hand_mg=totals.powder_on_hand,
        powder_returned_mg=totals.returned, due_on=terms.due_on,
        days_left=(terms.due_on - today).days, flags=flags, specimen_lines=lines,
    )  # fmt: skip


def _specimen_flags(books: _Books, permitted: float | None) -> frozenset[str]:
    if permitted is not None and books.drilled > permitted:
        return books.flags | {"over limit"}
    return books.flags


# One validation call per loan: pydantic checks a list of lines in one pass (a decade's lab
# has 20,000 of them; one call each would double reconcile's time).
_SPECIMEN_LINES = TypeAdapter(list[SpecimenLine])


def _specimen_line(books: _Books, flags: frozenset[str], permitted: float | None) -> dict[str, Any]:
    return {
        "id": format_id(Kind.SPECIMEN, books.id), "catalog_number": books.catalog_number,
        "status": books.status.value, "powders": books.powders, "drilled_mg": books.drilled,
        "drilled_u_mg": math.sqrt(books.variance), "permitted_mg": permitted,
        "dissolved_mg": books.dissolved, "powder_on_hand_mg": books.on_hand,
        "powder_returned_mg": books.returned, "flags": sorted(flags),
    }  # fmt: skip


def _loan_flags(
    loan: Loan,
    terms: Any,
    today: date,
    totals: _Totals,
    permitted: float | None,
    used: float | None,
) -> list[str]:
    flags = set(totals.flags)
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


def _urgency(line: LoanLine) -> tuple[int, int, int, float]:
    closed = 0 if line.status == LoanStatus.OPEN.value else 1
    serious = -sum(f in ("over limit", "unaccounted material", "overdue") for f in line.flags)
    return (closed, serious, line.days_left, -(line.used_fraction or 0.0))
