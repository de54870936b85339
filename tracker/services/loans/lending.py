"""Lenders and loans: who lends, under which terms."""

from __future__ import annotations

from datetime import date
from typing import Annotated

from pydantic import Field, field_validator, model_validator
from sqlalchemy import select
from sqlalchemy.orm import selectinload

from tracker.db.database import Database
from tracker.domain.base import decimal_text
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.models import Disposition, Lender, Loan, LoanTerms, TermsKind
from tracker.services.core.common import finish
from tracker.services.core.inputs import (
    FieldProblem,
    Name,
    PositiveMassMg,
    Raw,
    Request,
    Text,
    parse,
)
from tracker.services.core.lookup import get_lender
from tracker.services.core.uow import unit_of_work
from tracker.services.core.views import Done, LenderView, LoanView


class NewLender(Request):
    name: Name
    institution_code: Annotated[str, Field(max_length=40)] | None = None
    contact_name: Name | None = None
    contact_email: Annotated[str, Field(max_length=200, pattern=r"^[^@\s]+@[^@\s]+$")] | None = None
    address: Annotated[str, Field(max_length=500)] | None = None


def add_lender(db: Database, actor: str | None, data: NewLender | Raw) -> Done[LenderView]:
    """Register an institution that lends specimens."""
    request = parse(NewLender, data)
    with unit_of_work(db, actor) as uow:
        if uow.session.scalars(select(Lender).where(Lender.name == request.name)).first():
            raise RuleViolation("name", request.name, "a lender with this name already exists")
        lender = Lender(**request.model_dump(), created_at=uow.now)
        uow.session.add(lender)
        return finish(
            uow, "lender.added", lender, request.model_dump(), lambda: LenderView.of(lender)
        )


def list_lenders(db: Database) -> list[LenderView]:
    with db.read_session() as session:
        return [LenderView.of(r) for r in session.scalars(select(Lender).order_by(Lender.name))]


def _tissue_list(value: object) -> list[str]:
    items = value.split(",") if isinstance(value, str) else list(value)  # type: ignore[call-overload]
    tissues = sorted({str(item).strip().lower() for item in items if str(item).strip()})
    if not tissues:
        raise ValueError("name at least one tissue the lender permits, e.g. 'enamel'")
    return tissues


class TermsInput(Request):
    """The terms of a loan as agreed; every amendment repeats the whole set."""

    permitted_tissues: list[str]
    max_mass_per_specimen: PositiveMassMg | None = None
    max_total_mass: PositiveMassMg | None = None
    max_specimens_sampled: Annotated[int, Field(gt=0)] | None = None
    due_on: date
    return_specimens: bool = True
    powder_disposition: Disposition = Disposition.RETURN
    solution_disposition: Disposition = Disposition.DESTROY
    report_data: bool = True
    acknowledgement: bool = True
    notes: Text | None = None

    @field_validator("permitted_tissues", mode="before")
    @classmethod
    def _tissues(cls, value: object) -> list[str]:
        return _tissue_list(value)

    @model_validator(mode="after")
    def _limits_consistent(self) -> TermsInput:
        per, total = self.max_mass_per_specimen, self.max_total_mass
        if per is not None and total is not None and per > total:
            raise FieldProblem(
                "max-mass-per-specimen", f"{per} mg", f"exceeds the loan's total ({total} mg)"
            )
        return self


class NewLoan(Request):
    lender: str
    reference: Annotated[str, Field(min_length=1, max_length=80)]
    title: Annotated[str, Field(min_length=1, max_length=300)]
    borrower: Name
    received_on: date | None = None
    terms: TermsInput


def add_loan(db: Database, actor: str | None, data: NewLoan | Raw) -> Done[LoanView]:
    """Record a loan agreement and its original terms (version 1)."""
    request = parse(NewLoan, data)
    with unit_of_work(db, actor) as uow:
        lender = get_lender(uow.session, "lender", request.lender)
        today = uow.now.date()
        if request.received_on and request.received_on > today:
            raise InputError("received-on", request.received_on.isoformat(), "is in the future")
        start = request.received_on or today
        if request.terms.due_on < start:
            raise InputError(
                "due-on",
                request.terms.due_on.isoformat(),
                f"is before the loan starts ({start.isoformat()})",
            )
        clash = select(Loan).where(Loan.lender_id == lender.id, Loan.reference == request.reference)
        if uow.session.scalars(clash).first():
            raise RuleViolation("reference", request.reference, "this lender already has that loan")
        loan = Loan(
            lender=lender,
            reference=request.reference,
            title=request.title,
            borrower=request.borrower,
            received_on=request.received_on,
            created_at=uow.now,
        )
        terms = terms_row(
            request.terms,
            version=1,
            kind=TermsKind.ORIGINAL,
            effective_from=start,
            recorded_by=uow.operator.code,
        )
        terms.recorded_at = uow.now
        loan.terms.append(terms)
        uow.session.add(loan)
        payload = {
            "lender": lender.public_id,
            "reference": request.reference,
            "title": request.title,
            "borrower": request.borrower,
            "received_on": request.received_on.isoformat() if request.received_on else None,
            "terms": terms_payload(request.terms),
        }
        return finish(
            uow,
            "loan.added",
            loan,
            payload,
            lambda: LoanView.of(loan, uow.now.date()),
            parent=lender,
        )


def terms_row(
    terms: TermsInput, *, version: int, kind: TermsKind, effective_from: date, recorded_by: str
) -> LoanTerms:
    return LoanTerms(
        version=version,
        kind=kind,
        effective_from=effective_from,
        permitted_tissues=terms.permitted_tissues,
        max_mass_per_specimen_mg=terms.max_mass_per_specimen,
        max_total_mass_mg=terms.max_total_mass,
        max_specimens_sampled=terms.max_specimens_sampled,
        due_on=terms.due_on,
        return_specimens=terms.return_specimens,
        powder_disposition=terms.powder_disposition,
        solution_disposition=terms.solution_disposition,
        report_data=terms.report_data,
        acknowledgement=terms.acknowledgement,
        notes=terms.notes,
        recorded_by=recorded_by,
    )


def terms_payload(terms: TermsInput) -> dict[str, object]:
    data = terms.model_dump(mode="json")
    for key in ("max_mass_per_specimen", "max_total_mass"):
        data.pop(key)
        value = getattr(terms, key)  # in mg, exactly as typed: its digits, as facts say it
        data[f"{key}_mg"] = None if value is None else decimal_text(value)
    return data


def list_loans(db: Database) -> list[LoanView]:
    with db.read_session() as session:
        loans = session.scalars(
            select(Loan)
            .options(selectinload(Loan.terms), selectinload(Loan.lender))
            .order_by(Loan.id)
        )
        today = db.clock().date()
        return [LoanView.of(loan, today) for loan in loans]
