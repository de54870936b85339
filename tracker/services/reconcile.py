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
from dataclasses import dataclass, field
from datetime import date
from typing import Any

from pydantic import Field
from sqlalchemy import Select, and_, case, func, select
from sqlalchemy.orm import Session, selectinload

from tracker.db.database import Database
from tracker.domain.budget import COVERAGE_FACTOR, SQRT6
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


@dataclass
class _Sums:
    """Per-specimen totals read from the database."""

    powders: int = 0
    drilled: float = 0.0
    variance: float = 0.0
    dissolved: float = 0.0
    on_hand: float = 0.0
    returned: float = 0.0
    overrides: int = 0
    unaccounted: int = 0
    unweighed: int = 0
    flags: set[str] = field(default_factory=set)


def reconcile(db: Database, loan: str | None = None, *, specimens: bool = True) -> list[LoanLine]:
    """One line per loan (most urgent first), each with its specimens unless asked not to."""
    today = db.clock().date()
    with db.read_session() as session:
        query = select(Loan).options(selectinload(Loan.terms), selectinload(Loan.lender))
        if loan is not None:
            query = query.where(Loan.id == get_loan(session, "loan", loan).id)
        loans = session.scalars(query).all()
        loan_ids = [row.id for row in loans]
        sums = _powder_sums(session, loan_ids)
        _solution_flags(session, loan_ids, sums)
        people = _specimen_rows(session, loan_ids)
        lines = [_loan_line(row, today, people.get(row.id, []), sums, specimens) for row in loans]
    return sorted(lines, key=_urgency)


def _beyond(square: Any, limit: Any) -> Any:
    """SQL for "square > limit" that ignores float noise (0.002000000000000224 vs 0.002)."""
    return square > limit * (1 + 1e-9) + 1e-18


def _per_powder(loan_ids: list[int]) -> Select[Any]:
    """One row per powder: drilled, dissolved, residual and the closure test's ingredients."""
    taken = (
        select(
            Solution.powder_id.label("powder_id"),
            func.sum(Solution.powder_mass_mg).label("mass"),
            func.sum(Solution.powder_mass_u_mg * Solution.powder_mass_u_mg).label("var"),
            func.sum(Solution.powder_mass_u_mg).label("u_sum"),
        )
        .group_by(Solution.powder_id)
        .subquery()
    )
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
    # |gap| beyond max(k·u, bound), compared in squares (SQLite has no sqrt by default)
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
        )
        .join(Powder.specimen)
        .outerjoin(taken, taken.c.powder_id == Powder.id)
        .where(Specimen.loan_id.in_(loan_ids))
    )  # fmt: skip


def _powder_sums(session: Session, loan_ids: list[int]) -> dict[int, _Sums]:
    rows = _per_powder(loan_ids).subquery()
    query = select(
        rows.c.specimen_id,
        func.count(),
        func.sum(rows.c.mass_mg),
        func.sum(rows.c.mass_u_mg * rows.c.mass_u_mg),
        func.sum(rows.c.dissolved),
        func.sum(rows.c.on_hand),
        func.sum(rows.c.returned),
        func.sum(rows.c.override),
        func.sum(rows.c.unaccounted),
        func.sum(rows.c.unweighed),
    ).group_by(rows.c.specimen_id)
    return {row[0]: _sums_of(row) for row in session.execute(query)}


def _sums_of(row: Any) -> _Sums:
    numbers = [float(v or 0) for v in row[2:7]]
    counts = [int(v or 0) for v in row[7:]]
    return _Sums(int(row[1]), *numbers, *counts)  # type: ignore[arg-type]


def _solution_flags(session: Session, loan_ids: list[int], sums: dict[int, _Sums]) -> None:
    """Solutions close too: solution = aliquots + residual, once the vial has left."""
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
    query = (
        select(Powder.specimen_id, Solution.residual_g.is_(None))
        .join(Solution.powder).join(Powder.specimen)
        .outerjoin(taken, taken.c.sid == Solution.id)
        .where(Specimen.loan_id.in_(loan_ids), Solution.status.in_(_CLOSED),
               _beyond(gap * gap, COVERAGE_FACTOR**2 * variance),
               _beyond(gap * gap, bound * bound))
    )  # fmt: skip
    for specimen_id, unweighed in session.execute(query):
        line = sums.setdefault(specimen_id, _Sums())
        line.flags.add("missing weighing" if unweighed else "unaccounted material")


def _specimen_rows(session: Session, loan_ids: list[int]) -> dict[int, list[Any]]:
    query = (
        select(Specimen.id, Specimen.loan_id, Specimen.catalog_number, Specimen.status)
        .where(Specimen.loan_id.in_(loan_ids))
        .order_by(Specimen.id)
    )
    grouped: dict[int, list[Any]] = defaultdict(list)
    for row in session.execute(query):
        grouped[row.loan_id].append(row)
    return grouped


def _loan_line(
    loan: Loan, today: date, rows: list[Any], sums: dict[int, _Sums], with_specimens: bool
) -> LoanLine:
    terms = terms_in_force(loan.terms, today)
    lines = [
        _specimen_line(row, sums.get(row.id, _Sums()), terms.max_mass_per_specimen_mg)
        for row in rows
    ]
    drilled = sum(line.drilled_mg for line in lines)
    used = drilled / terms.max_total_mass_mg if terms.max_total_mass_mg else None
    flags = _loan_flags(loan, terms, today, lines, used)
    return LoanLine(
        id=loan.public_id, reference=loan.reference, lender=loan.lender.name,
        lender_code=loan.lender.institution_code or loan.lender.name, status=loan.status.value,
        terms_version=terms.version, permitted_tissues=list(terms.permitted_tissues),
        max_mass_per_specimen_mg=terms.max_mass_per_specimen_mg,
        max_total_mass_mg=terms.max_total_mass_mg,
        max_specimens_sampled=terms.max_specimens_sampled, specimens=len(lines),
        on_hand=sum(1 for r in rows if r.status is SpecimenStatus.ON_HAND),
        sampled=sum(1 for line in lines if line.powders), drilled_mg=drilled,
        drilled_u_mg=math.sqrt(sum(line.drilled_u_mg**2 for line in lines)), used_fraction=used,
        dissolved_mg=sum(line.dissolved_mg for line in lines),
        powder_on_hand_mg=sum(line.powder_on_hand_mg for line in lines),
        powder_returned_mg=sum(line.powder_returned_mg for line in lines),
        due_on=terms.due_on, days_left=(terms.due_on - today).days, flags=flags,
        specimen_lines=lines if with_specimens else [],
    )  # fmt: skip


def _specimen_line(row: Any, sums: _Sums, permitted: float | None) -> SpecimenLine:
    flags = set(sums.flags)
    if permitted is not None and sums.drilled > permitted:
        flags.add("over limit")
    if sums.overrides:
        flags.add("override used")
    if sums.unaccounted:
        flags.add("unaccounted material")
    if sums.unweighed:
        flags.add("missing weighing")
    if sums.on_hand > 0 and row.status is not SpecimenStatus.EXPECTED:
        flags.add("powder on hand")
    return SpecimenLine(
        id=Specimen(id=row.id).public_id, catalog_number=row.catalog_number,
        status=row.status.value, powders=sums.powders, drilled_mg=sums.drilled,
        drilled_u_mg=math.sqrt(sums.variance), permitted_mg=permitted,
        dissolved_mg=sums.dissolved, powder_on_hand_mg=sums.on_hand,
        powder_returned_mg=sums.returned, flags=sorted(flags),
    )  # fmt: skip


def _loan_flags(
    loan: Loan, terms: Any, today: date, lines: list[SpecimenLine], used: float | None
) -> list[str]:
    flags: set[str] = set()
    for line in lines:
        flags.update(f for f in line.flags if f != "powder on hand")
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
        if terms.powder_disposition is Disposition.RETURN and any(
            line.powder_on_hand_mg > 0 for line in lines
        ):
            flags.add("powder to return")
    return sorted(flags)


def _urgency(line: LoanLine) -> tuple[int, int, int, float]:
    closed = 0 if line.status == LoanStatus.OPEN.value else 1
    serious = -sum(f in ("over limit", "unaccounted material", "overdue") for f in line.flags)
    return (closed, serious, line.days_left, -(line.used_fraction or 0.0))
