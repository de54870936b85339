"""Drilling: the one action that consumes a lender's specimen, so the one that checks the loan.

A drill is refused (exit 1) when it would take a tissue the loan does not permit,
exceed the per-specimen or total mass, sample one specimen too many, or fall after
the due date — judged by the terms in force on the day of the drill. The refusal
states each limit, what is used, what was asked and what remains. A manager may
override with a written reason; the override is recorded on the powder and in the
ledger, and every later reconciliation and report flags it.
"""

from __future__ import annotations

import math
from datetime import date
from typing import Annotated

from pydantic import Field, field_validator
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.allowance import Limits, Usage, Violation, check_drill
from tracker.domain.budget import Amount
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.materials import TISSUE_DEFAULTS
from tracker.domain.models import LoanTerms, Powder, Specimen
from tracker.domain.terms import terms_in_force
from tracker.domain.units import format_value_u
from tracker.services.common import (
    MICROBALANCE_MG,
    action_time,
    finish,
    optional_location,
    require_on_hand,
    weigh,
)
from tracker.services.inputs import AwareDatetime, PositiveMassMg, Raw, Request, parse
from tracker.services.label_queue import queue_label
from tracker.services.lookup import get_by_id
from tracker.services.materials import find_material
from tracker.services.uow import UnitOfWork, unit_of_work
from tracker.services.views import Done, PowderView


class Drill(Request):
    specimen: str
    tissue: Annotated[str, Field(min_length=1, max_length=60)]
    site: Annotated[str, Field(max_length=200)] | None = None
    tare: PositiveMassMg
    gross: PositiveMassMg
    readability: PositiveMassMg = MICROBALANCE_MG
    material: Annotated[str, Field(max_length=120)] | None = None
    drilled_at: AwareDatetime | None = None
    location: str | None = None
    override_reason: Annotated[str, Field(min_length=10, max_length=4000)] | None = None

    @field_validator("tissue")
    @classmethod
    def _lower(cls, value: str) -> str:
        return value.lower()


def drill(db: Database, actor: str | None, data: Drill | Raw) -> Done[PowderView]:
    """Drill powder from a specimen within the loan's terms (or a manager's override)."""
    request = parse(Drill, data)
    mass = weigh(request.tare, request.gross, request.readability).amount()
    with unit_of_work(db, actor) as uow:
        specimen = get_by_id(uow.session, Specimen, "specimen", request.specimen)
        require_on_hand(specimen)
        when = action_time(uow, request.drilled_at, "drilled-at")
        terms = terms_in_force(specimen.loan.terms, when.date())
        violations = check_drill(
            limits_of(terms), usage_of(uow.session, specimen), request.tissue, mass, when.date()
        )
        _refuse_or_override(uow, request, violations, mass, when.date())
        material = request.material or TISSUE_DEFAULTS.get(request.tissue)
        if material is not None:
            material = find_material(uow.session, "material", material).name
        powder = Powder(
            specimen=specimen, tissue=request.tissue, site=request.site,
            tare_mg=float(request.tare), gross_mg=float(request.gross),
            readability_mg=float(request.readability), mass_mg=mass.value, mass_u_mg=mass.u,
            material=material, drilled_at=when, drilled_by=uow.operator.code,
            override_reason=request.override_reason if violations else None,
            location=optional_location(uow, "location", request.location), created_at=uow.now,
        )  # fmt: skip
        uow.session.add(powder)
        payload = {
            "specimen": specimen.public_id, "tissue": powder.tissue, "site": powder.site,
            "tare_mg": powder.tare_mg, "gross_mg": powder.gross_mg,
            "readability_mg": powder.readability_mg, "mass_mg": powder.mass_mg,
            "mass_u_mg": powder.mass_u_mg, "material": material,
            "drilled_at": powder.drilled_at.isoformat(), "terms_version": terms.version,
            "override": {"reason": request.override_reason,
                         "limits": [v.message for v in violations]} if violations else None,
            "label": queue_label(uow, powder),
        }  # fmt: skip
        return finish(
            uow, "powder.drilled", powder, payload, lambda: PowderView.of(powder), parent=specimen
        )


def _refuse_or_override(
    uow: UnitOfWork, request: Drill, violations: list[Violation], mass: Amount, day: date
) -> None:
    if not violations:
        if request.override_reason:
            raise InputError(
                "override-reason",
                request.override_reason,
                "no limit is exceeded; nothing to override",
            )
        return
    if request.override_reason:
        uow.require_manager("overriding a loan limit")
        return
    field, value = _field_of(violations[0], request, mass, day)
    reasons = "; ".join(v.message for v in violations)
    raise RuleViolation(field, value, f"{reasons} — a manager may override with a written reason")


def _field_of(violation: Violation, request: Drill, mass: Amount, day: date) -> tuple[str, str]:
    if violation.limit == "tissue":
        return "tissue", request.tissue
    if violation.limit == "due date":
        return "drilled-at", day.isoformat()
    if violation.limit == "specimen count":
        return "specimen", request.specimen
    return "drilled-mass", format_value_u(mass.value, mass.u, "mg")


def limits_of(terms: LoanTerms) -> Limits:
    return Limits(
        permitted_tissues=tuple(terms.permitted_tissues),
        max_mass_per_specimen_mg=terms.max_mass_per_specimen_mg,
        max_total_mass_mg=terms.max_total_mass_mg,
        max_specimens_sampled=terms.max_specimens_sampled,
        due_on=terms.due_on,
        version=terms.version,
    )


def usage_of(session: Session, specimen: Specimen) -> Usage:
    """What the specimen's loan has given so far: two aggregate queries, no row loads."""
    loan_rows = (
        select(Powder.specimen_id, Powder.mass_mg, Powder.mass_u_mg)
        .join(Powder.specimen)
        .where(Specimen.loan_id == specimen.loan_id)
        .subquery()
    )
    total, variance, sampled = session.execute(
        select(
            func.coalesce(func.sum(loan_rows.c.mass_mg), 0.0),
            func.coalesce(func.sum(loan_rows.c.mass_u_mg * loan_rows.c.mass_u_mg), 0.0),
            func.count(func.distinct(loan_rows.c.specimen_id)),
        )
    ).one()
    own, own_variance, own_count = session.execute(
        select(
            func.coalesce(func.sum(Powder.mass_mg), 0.0),
            func.coalesce(func.sum(Powder.mass_u_mg * Powder.mass_u_mg), 0.0),
            func.count(Powder.id),
        ).where(Powder.specimen_id == specimen.id)
    ).one()
    return Usage(
        loan_drilled=Amount(float(total), math.sqrt(float(variance))),
        specimen_drilled=Amount(float(own), math.sqrt(float(own_variance))),
        sampled_specimens=int(sampled),
        specimen_already_sampled=own_count > 0,
    )
