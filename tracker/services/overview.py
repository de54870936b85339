"""The lab's loans at a glance: consumption against the terms in force, due dates, flags."""

from __future__ import annotations

from collections import defaultdict
from datetime import date

from sqlalchemy import func, select
from sqlalchemy.orm import selectinload

from tracker.db.database import Database
from tracker.domain.models import Loan, LoanStatus, Powder, Specimen, SpecimenStatus
from tracker.domain.terms import terms_in_force
from tracker.services.views import View

DUE_SOON_DAYS = 30


class LoanLine(View):
    id: str
    reference: str
    lender: str
    lender_code: str
    status: str
    specimens: int
    on_hand: int
    sampled: int
    max_specimens_sampled: int | None
    drilled_mg: float
    max_total_mass_mg: float | None
    used_fraction: float | None
    due_on: date
    days_left: int
    flags: list[str]


def overview(db: Database, *, include_closed: bool = False) -> list[LoanLine]:
    """One line per loan, most urgent first (overdue, then nearest limit or due date)."""
    today = db.clock().date()
    with db.read_session() as session:
        loans = session.scalars(
            select(Loan).options(selectinload(Loan.terms), selectinload(Loan.lender))
        ).all()
        drilled = {
            row[0]: row[1]
            for row in session.execute(
                select(Specimen.loan_id, func.sum(Powder.mass_mg))
                .join(Powder.specimen)
                .group_by(Specimen.loan_id)
            )
        }
        sampled = {
            row[0]: row[1]
            for row in session.execute(
                select(Specimen.loan_id, func.count(func.distinct(Powder.specimen_id)))
                .join(Powder.specimen)
                .group_by(Specimen.loan_id)
            )
        }
        counts: dict[int, dict[SpecimenStatus, int]] = defaultdict(dict)
        for loan_id, status, n in session.execute(
            select(Specimen.loan_id, Specimen.status, func.count()).group_by(
                Specimen.loan_id, Specimen.status
            )
        ):
            counts[loan_id][status] = n
        lines = [
            _line(
                loan,
                today,
                drilled.get(loan.id, 0.0) or 0.0,
                sampled.get(loan.id, 0),
                counts[loan.id],
            )
            for loan in loans
            if include_closed or loan.status is not LoanStatus.CLOSED
        ]
    return sorted(lines, key=_urgency)


def _line(
    loan: Loan, today: date, drilled: float, sampled: int, counts: dict[SpecimenStatus, int]
) -> LoanLine:
    terms = terms_in_force(loan.terms, today)
    used = drilled / terms.max_total_mass_mg if terms.max_total_mass_mg else None
    days_left = (terms.due_on - today).days
    flags: list[str] = []
    if loan.status is LoanStatus.OPEN:
        if days_left < 0:
            flags.append("overdue")
        elif days_left <= DUE_SOON_DAYS:
            flags.append("due soon")
        if used is not None and used > 1:
            flags.append("OVER LIMIT")
        elif used is not None and used >= 0.9:
            flags.append("near limit")
        if terms.max_specimens_sampled is not None and sampled >= terms.max_specimens_sampled:
            flags.append("count full")
    return LoanLine(
        id=loan.public_id,
        reference=loan.reference,
        lender=loan.lender.name,
        lender_code=loan.lender.institution_code or loan.lender.name,
        status=loan.status.value,
        specimens=sum(counts.values()),
        on_hand=counts.get(SpecimenStatus.ON_HAND, 0),
        sampled=sampled,
        max_specimens_sampled=terms.max_specimens_sampled,
        drilled_mg=drilled,
        max_total_mass_mg=terms.max_total_mass_mg,
        used_fraction=used,
        due_on=terms.due_on,
        days_left=days_left,
        flags=flags,
    )


def _urgency(line: LoanLine) -> tuple[int, int, float]:
    closed = 0 if line.status == LoanStatus.OPEN.value else 1
    return (closed, line.days_left, -(line.used_fraction or 0.0))
