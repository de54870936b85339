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
from datetime import date, datetime
from typing import Annotated, Any

from pydantic import Field, field_validator
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.allowance import Limits, Recorded, Usage, Violation, check_drill
from tracker.domain.base import computed
from tracker.domain.budget import Amount, as_float
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.materials import TISSUE_DEFAULTS
from tracker.domain.models import LoanTerms, Location, Powder, Specimen
from tracker.domain.precision import value_u
from tracker.domain.terms import terms_in_force
from tracker.domain.timing import day_of
from tracker.services.admin.materials import find_material
from tracker.services.core.common import (
    MICROBALANCE_MG,
    action_time,
    checked_in,
    finish,
    optional_location,
    require_on_hand,
    weigh,
)
from tracker.services.core.inputs import AwareDatetime, PositiveMassMg, Raw, Request, parse
from tracker.services.core.label_queue import queue_label
from tracker.services.core.lookup import get_by_id
from tracker.services.core.uow import Acting, UnitOfWork, unit_of_work
from tracker.services.core.views import Done, PowderView, View


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


def drilled_payload(
    powder: Powder,
    specimen: Specimen,
    material: str | None,
    terms_version: int,
    request: Drill,
    violations: list[Any],
) -> dict[str, Any]:
    """What the ``powder.drilled`` event records (the bench's bulk writer uses it too)."""
    return {
        "specimen": specimen.public_id,
        "tissue": powder.tissue,
        "site": powder.site,
        "tare_mg": powder.tare_mg,
        "gross_mg": powder.gross_mg,
        "readability_mg": powder.readability_mg,
        "mass_mg": powder.mass_mg,
        "mass_u_mg": powder.mass_u_mg,
        "material": material,
        "drilled_at": powder.drilled_at.isoformat(),
        "terms_version": terms_version,
        "override": {"reason": request.override_reason, "limits": [v.message for v in violations]}
        if violations
        else None,
    }


def drill(db: Database, actor: str | None, data: Drill | Raw) -> Done[PowderView]:
    """Drill powder from a specimen within the loan's terms (or a manager's override)."""
    request = parse(Drill, data)
    mass = weigh(request.tare, request.gross, request.readability).amount()
    with unit_of_work(db, actor) as uow:
        specimen = get_by_id(uow.session, Specimen, "specimen", request.specimen)
        require_on_hand(specimen)
        when = action_time(
            uow, request.drilled_at, "drilled-at", [checked_in(specimen)], books=specimen
        )
        terms = terms_in_force(specimen.loan.terms, when.date())
        violations = check_drill(
            limits_of(terms),
            usage_of(uow.session, specimen),
            request.tissue,
            mass,
            when.date(),
            recorded_on(specimen.loan.terms, uow.now.date()),
        )
        _refuse_or_override(uow, request, violations, mass, when.date())
        material = request.material or TISSUE_DEFAULTS.get(request.tissue)
        if material is not None:
            material = find_material(uow.session, "material", material).name
        location = optional_location(uow, "location", request.location)
        powder = drilled_powder(uow, specimen, request, mass, material, when, violations, location)
        uow.session.add(powder)
        payload = drilled_payload(powder, specimen, material, terms.version, request, violations)
        payload["label"] = queue_label(uow, powder)
        return finish(
            uow, "powder.drilled", powder, payload, lambda: PowderView.of(powder), parent=specimen
        )


def drilled_powder(
    who: Acting,
    specimen: Specimen,
    request: Drill,
    mass: Amount,
    material: str | None,
    when: datetime,
    violations: list[Violation],
    location: Location | None,
) -> Powder:
    """The drilled powder's row: the drill's, and the benchmark's bulk writer's. Its masses
    are stored exactly: the weighings as typed, the net mass and its uncertainty as the
    weighing states them (``mass`` is the same weighing, for the loan's rules)."""
    net, net_u = weigh(request.tare, request.gross, request.readability).stored()
    return Powder(
        specimen=specimen,
        specimen_id=specimen.id,
        tissue=request.tissue,
        site=request.site,
        tare_mg=request.tare,
        gross_mg=request.gross,
        readability_mg=request.readability,
        mass_mg=net,
        mass_u_mg=net_u,
        material=material,
        drilled_at=when,
        drilled_by=who.operator.code,
        override_reason=request.override_reason if violations else None,
        location=location,
        location_id=location.id if location else None,
        created_at=who.now,
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
    return "drilled-mass", value_u(mass.value, mass.u, "mg")


def recorded_on(versions: list[LoanTerms], day: date) -> Recorded:
    """The recording day and the due date in force on it (see :class:`Recorded`)."""
    return Recorded(day, terms_in_force(versions, day).due_on)


def limits_of(terms: LoanTerms) -> Limits:
    return Limits(
        permitted_tissues=tuple(terms.permitted_tissues),
        max_mass_per_specimen_mg=as_float(terms.max_mass_per_specimen_mg),
        max_total_mass_mg=as_float(terms.max_total_mass_mg),
        max_specimens_sampled=terms.max_specimens_sampled,
        due_on=terms.due_on,
        version=terms.version,
    )


def usage_of(session: Session, specimen: Specimen) -> Usage:
    """What the specimen's loan has given so far: two aggregate queries, no row loads."""
    loan_rows = (
        select(
            Powder.specimen_id,
            computed(Powder.mass_mg).label("mass_mg"),
            computed(Powder.mass_u_mg).label("mass_u_mg"),
        )
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
            func.coalesce(func.sum(computed(Powder.mass_mg)), 0.0),
            func.coalesce(func.sum(computed(Powder.mass_u_mg) * computed(Powder.mass_u_mg)), 0.0),
            func.count(Powder.id),
        ).where(Powder.specimen_id == specimen.id)
    ).one()
    return Usage(
        loan_drilled=Amount(float(total), math.sqrt(float(variance))),
        specimen_drilled=Amount(float(own), math.sqrt(float(own_variance))),
        sampled_specimens=int(sampled),
        specimen_already_sampled=own_count > 0,
    )


class DrillDraft(Request):
    """A drill form as it is being filled in: weighings may still be missing."""

    specimen: str
    tissue: Annotated[str, Field(max_length=60)] | None = None
    tare: PositiveMassMg | None = None
    gross: PositiveMassMg | None = None
    readability: PositiveMassMg = MICROBALANCE_MG
    drilled_at: AwareDatetime | None = None


class LimitLine(View):
    """One of the loan's mass limits as the draft would leave it (mg)."""

    name: str
    limit_mg: float | None
    used_mg: float
    used_u_mg: float
    left_before_mg: float | None
    left_after_mg: float | None


class DrillPreview(View):
    """What a drill would do to the loan's allowance; nothing is written."""

    specimen: str
    catalog_number: str
    loan: str
    status: str
    terms_version: int
    permitted_tissues: list[str]
    tissue: str
    mass_mg: float | None
    mass_u_mg: float | None
    per_specimen: LimitLine
    loan_total: LimitLine
    max_specimens_sampled: int | None
    sampled_specimens: int
    already_sampled: bool
    due_on: date
    problem: str | None  # the weighings cannot be read yet (one line, field first)
    violations: list[str]
    within: bool  # a mass is known, it is readable and no limit is broken


def preview_drill(db: Database, data: DrillDraft | Raw) -> DrillPreview:
    """The drill service's own limit check, run read-only on a draft as it is typed.

    Uses the same terms-in-force, usage and :func:`check_drill` as :func:`drill`, so the
    preview and the save can never disagree about what the loan allows.
    """
    request = parse(DrillDraft, data)
    mass: Amount | None = None
    problem: str | None = None
    if request.tare is not None and request.gross is not None:
        try:
            mass = weigh(request.tare, request.gross, request.readability).amount()
        except InputError as error:
            problem = error.one_line()
    with db.read_session() as session:
        specimen = get_by_id(session, Specimen, "specimen", request.specimen)
        today = db.clock().date()
        day = day_of(request.drilled_at) if request.drilled_at else today
        terms = terms_in_force(specimen.loan.terms, day)
        limits, usage = limits_of(terms), usage_of(session, specimen)
        tissue = (request.tissue or terms.permitted_tissues[0]).lower()
        recorded = recorded_on(specimen.loan.terms, today)
        violations = (
            [v.message for v in check_drill(limits, usage, tissue, mass, day, recorded)]
            if mass
            else []
        )
        return DrillPreview(
            specimen=specimen.public_id,
            catalog_number=specimen.catalog_number,
            loan=specimen.loan.reference,
            status=specimen.status.value,
            terms_version=terms.version,
            permitted_tissues=list(terms.permitted_tissues),
            tissue=tissue,
            mass_mg=mass.value if mass else None,
            mass_u_mg=mass.u if mass else None,
            per_specimen=_limit_line(
                "per specimen", limits.max_mass_per_specimen_mg, usage.specimen_drilled, mass
            ),
            loan_total=_limit_line(
                "loan total", limits.max_total_mass_mg, usage.loan_drilled, mass
            ),
            max_specimens_sampled=limits.max_specimens_sampled,
            sampled_specimens=usage.sampled_specimens,
            already_sampled=usage.specimen_already_sampled,
            due_on=limits.due_on,
            problem=problem,
            violations=violations,
            within=mass is not None and problem is None and not violations,
        )


def _limit_line(name: str, limit: float | None, used: Amount, mass: Amount | None) -> LimitLine:
    before = None if limit is None else limit - used.value
    after = None if before is None or mass is None else before - mass.value
    return LimitLine(
        name=name,
        limit_mg=limit,
        used_mg=used.value,
        used_u_mg=used.u,
        left_before_mg=before,
        left_after_mg=after,
    )
