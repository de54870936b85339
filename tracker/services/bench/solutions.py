"""Bench actions on solutions: dissolve a powder, record a concentration, take an aliquot."""

from __future__ import annotations

from datetime import datetime
from decimal import Decimal
from typing import Annotated, Any

from pydantic import Field, model_validator

from tracker.db.database import Database
from tracker.domain.base import decimal_from_float
from tracker.domain.budget import (
    Amount,
    by_difference,
    element_mass_ug,
    is_significant,
    overdraws,
    remaining,
    weighed,
)
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.models import (
    Aliquot,
    AliquotPurpose,
    ColumnBatch,
    Concentration,
    ContainerStatus,
    Location,
    Powder,
    Solution,
)
from tracker.domain.precision import grams, mass_mg
from tracker.domain.timing import Since, not_before
from tracker.domain.units import decimals_below
from tracker.services.bench.plausibility import require_plausible
from tracker.services.core.common import (
    ANALYTICAL_BALANCE_MG,
    MICROBALANCE_MG,
    action_time,
    finish,
    optional_location,
    weigh,
)
from tracker.services.core.inputs import (
    AwareDatetime,
    Element,
    FieldProblem,
    FractionUgPerG,
    PositiveMassMg,
    Raw,
    Request,
    parse,
)
from tracker.services.core.label_queue import queue_label
from tracker.services.core.lookup import get_by_id
from tracker.services.core.uow import Acting, unit_of_work
from tracker.services.core.views import AliquotView, ConcentrationView, Done, SolutionView


def powder_remaining(powder: Powder) -> Amount:
    """Powder not yet taken into a solution."""
    taken = (weighed(s.powder_mass_mg, s.powder_mass_u_mg) for s in powder.solutions)
    return remaining(by_difference(powder.mass_mg, powder.readability_mg), taken)


class Dissolve(Request):
    powder: str
    acid: Annotated[str, Field(min_length=1, max_length=120)]
    vial_tare: PositiveMassMg
    vial_gross: PositiveMassMg
    readability: PositiveMassMg = ANALYTICAL_BALANCE_MG
    powder_taken: PositiveMassMg | None = None  # None: all the powder that remains
    powder_readability: PositiveMassMg = MICROBALANCE_MG
    dissolved_at: AwareDatetime | None = None
    location: str | None = None


def dissolved_solution(
    who: Acting,
    powder: Powder,
    request: Dissolve,
    taken: Amount,
    grams: tuple[Decimal, Decimal],
    when: datetime,
    location: Location | None,
) -> Solution:
    """The new solution's row: the dissolve service's, and the benchmark's bulk writer's.

    Stored exactly: the powder taken as weighed (or all that remains), the solution's mass
    and its uncertainty as its weighing states them (``grams``)."""
    return Solution(
        powder=powder,
        powder_id=powder.id,
        powder_mass_mg=portion_taken_mg(powder, request),
        powder_mass_u_mg=decimal_from_float(taken.u),
        acid=request.acid,
        solution_mass_g=grams[0],
        solution_mass_u_g=grams[1],
        dissolved_at=when,
        dissolved_by=who.operator.code,
        location=location,
        location_id=location.id if location else None,
        created_at=who.now,
    )


def dissolve(db: Database, actor: str | None, data: Dissolve | Raw) -> Done[SolutionView]:
    """Dissolve all or part of a powder; the solution is weighed by difference."""
    request = parse(Dissolve, data)
    solution_mass = weigh(
        request.vial_tare, request.vial_gross, request.readability, ("vial-tare", "vial-gross")
    )
    with unit_of_work(db, actor) as uow:
        powder = get_by_id(uow.session, Powder, "powder", request.powder)
        left, taken = portion_to_dissolve(powder, request)
        if not is_significant(remaining(left, [taken])):  # nothing measurable is left
            powder.status = ContainerStatus.CONSUMED
        grams = solution_mass.stored(shift=-3)
        when = action_time(
            uow, request.dissolved_at, "dissolved-at", [drilled(powder)], books=powder.specimen
        )
        location = optional_location(uow, "location", request.location)
        solution = dissolved_solution(uow, powder, request, taken, grams, when, location)
        uow.session.add(solution)
        payload = dissolved_payload(powder, solution, request, queue_label(uow, solution))
        return finish(
            uow,
            "solution.dissolved",
            solution,
            payload,
            lambda: SolutionView.of(solution),
            parent=powder,
        )


def dissolved_payload(
    powder: Powder, solution: Solution, request: Dissolve, label: str
) -> dict[str, Any]:
    """What the ``solution.dissolved`` event says (the bench's bulk writer uses it too)."""
    return {
        "powder": powder.public_id,
        "powder_mass_mg": solution.powder_mass_mg,
        "powder_mass_u_mg": solution.powder_mass_u_mg,
        "acid": request.acid,
        "vial_tare_mg": request.vial_tare,
        "vial_gross_mg": request.vial_gross,
        "readability_mg": request.readability,
        "solution_mass_g": solution.solution_mass_g,
        "solution_mass_u_g": solution.solution_mass_u_g,
        "powder_status": powder.status.value,
        "label": label,
    }


def drilled(powder: Powder) -> Since:
    return Since(f"{powder.public_id} was drilled", powder.drilled_at)


def dissolved(solution: Solution) -> Since:
    return Since(f"{solution.public_id} was dissolved", solution.dissolved_at)


def on_column_after(batch: ColumnBatch, aliquot: Aliquot) -> None:
    """An aliquot goes on a column of a batch performed on or after the day it was taken."""
    taken = Since(f"{aliquot.public_id} was taken", aliquot.taken_at)
    not_before("performed-on", batch.performed_on, [taken])


def portion_to_dissolve(powder: Powder, request: Dissolve) -> tuple[Amount, Amount]:
    """What remains of the powder and what the dissolution takes: from an available vial,
    never more than remains."""
    require_available(powder)
    left = powder_remaining(powder)
    taken = powder_portion(request, left)
    if overdraws(left, taken):
        raise RuleViolation(
            "powder-taken",
            mass_mg(taken.value),
            f"is more than remains of {powder.public_id} ({mass_mg(left.value, left.u)})",
        )
    return left, taken


def portion_taken_mg(powder: Powder, request: Dissolve) -> Decimal:
    """The powder a dissolution takes, exactly: as weighed, or all that remains (the drilled
    mass less every portion dissolved before)."""
    if request.powder_taken is not None:
        return request.powder_taken
    return powder.mass_mg - sum((s.powder_mass_mg for s in powder.solutions), Decimal(0))


def powder_portion(request: Dissolve, left: Amount) -> Amount:
    if request.powder_taken is None:
        if left.value <= 0:
            raise RuleViolation("powder", request.powder, "no powder remains to dissolve")
        return left
    if decimals_below(request.powder_taken, request.powder_readability):
        raise InputError(
            "powder-taken",
            f"{request.powder_taken} mg",
            f"has more decimals than the balance reads ({request.powder_readability} mg)",
        )
    return by_difference(float(request.powder_taken), float(request.powder_readability))


def require_available(container: Powder | Solution) -> None:
    if container.status is not ContainerStatus.AVAILABLE:
        raise RuleViolation(
            type(container).__name__.lower(),
            container.public_id,
            f"is {container.status.value}, not available",
        )


class ConcentrationValue(Request):
    """A measured mass fraction with exactly one kind of uncertainty."""

    solution: str
    element: Element
    value: FractionUgPerG
    uncertainty: FractionUgPerG | None = None
    relative_uncertainty_percent: Annotated[float, Field(gt=0, lt=100)] | None = None
    method: Annotated[str, Field(max_length=120)] | None = None
    # The person confirms a value its powder cannot hold (see ``bench/plausibility.py``).
    confirm_implausible: bool = False

    @model_validator(mode="after")
    def _one_uncertainty(self) -> ConcentrationValue:
        if (self.uncertainty is None) == (self.relative_uncertainty_percent is None):
            raise FieldProblem(
                "uncertainty",
                self.uncertainty,
                "give exactly one of uncertainty or relative-uncertainty-percent",
            )
        if self.value <= 0:
            raise FieldProblem("value", f"{self.value} ug/g", "must be greater than zero")
        return self

    def standard_uncertainty(self) -> Decimal:
        """As typed, or the value's typed share (the percentage's shortest decimal)."""
        if self.uncertainty is not None:
            return self.uncertainty
        assert self.relative_uncertainty_percent is not None
        return self.value * decimal_from_float(self.relative_uncertainty_percent) / 100


class RecordConcentration(ConcentrationValue):
    measured_at: AwareDatetime | None = None


def latest_concentration(solution: Solution, element: str | None = None) -> Concentration | None:
    """The newest measurement in force (for ``element`` if given).

    A corrected row is out of force: its correction (a row whose ``supersedes_id``
    names it, with the same measurement time) takes its place.
    """
    superseded = {c.supersedes_id for c in solution.concentrations if c.supersedes_id}
    rows = [
        c
        for c in solution.concentrations
        if (element is None or c.element == element) and c.id not in superseded
    ]
    return max(rows, key=lambda c: (c.measured_at, c.id)) if rows else None


def solution_element(solution: Solution, element: str | None = None) -> tuple[str, Amount] | None:
    concentration = latest_concentration(solution, element)
    if concentration is None:
        return None
    amount = element_mass_ug(
        Amount.of(solution.solution_mass_g, solution.solution_mass_u_g),
        Amount.of(concentration.value_ug_per_g, concentration.u_ug_per_g),
    )
    return concentration.element, amount


def concentration_row(
    who: Acting, solution: Solution, request: RecordConcentration, when: datetime
) -> Concentration:
    """A measured concentration's row: the service's, and the benchmark's bulk writer's."""
    return Concentration(
        solution=solution,
        solution_id=solution.id,
        element=request.element,
        value_ug_per_g=request.value,
        u_ug_per_g=request.standard_uncertainty(),
        method=request.method,
        measured_at=when,
        recorded_by=who.operator.code,
        created_at=who.now,
    )


def record_concentration(
    db: Database, actor: str | None, data: RecordConcentration | Raw
) -> Done[ConcentrationView]:
    """Record an element mass fraction measured in a solution (e.g. Ca by ICP-OES)."""
    request = parse(RecordConcentration, data)
    with unit_of_work(db, actor) as uow:
        solution = get_by_id(uow.session, Solution, "solution", request.solution)
        when = action_time(
            uow,
            request.measured_at,
            "measured-at",
            [dissolved(solution)],
            books=solution.powder.specimen,
        )
        confirmed = require_plausible(
            uow.session,
            solution,
            request.element,
            (request.value, request.standard_uncertainty()),
            request.confirm_implausible,
        )
        row = concentration_row(uow, solution, request, when)
        uow.session.add(row)
        uow.session.flush()
        element, payload = concentration_payload(solution, row)
        if confirmed is not None:
            payload["confirmed_implausible"] = confirmed
        return finish(
            uow,
            "concentration.recorded",
            solution,
            payload,
            lambda: ConcentrationView.of(row, element.value, element.u),
        )


def concentration_payload(solution: Solution, row: Concentration) -> tuple[Amount, dict[str, Any]]:
    """The element the solution holds by this concentration, and what the
    ``concentration.recorded`` event says (the bench's bulk writer uses it too)."""
    element = element_mass_ug(
        Amount.of(solution.solution_mass_g, solution.solution_mass_u_g),
        Amount.of(row.value_ug_per_g, row.u_ug_per_g),
    )
    payload = {
        "element": row.element,
        "value_ug_per_g": row.value_ug_per_g,
        "u_ug_per_g": row.u_ug_per_g,
        "method": row.method,
        "element_ug": element.value,
        "element_u_ug": element.u,
    }
    return element, payload


class TakeAliquot(Request):
    solution: str
    tare: PositiveMassMg
    gross: PositiveMassMg
    readability: PositiveMassMg = ANALYTICAL_BALANCE_MG
    purpose: AliquotPurpose = AliquotPurpose.ISOTOPES
    taken_at: AwareDatetime | None = None
    location: str | None = None


def solution_remaining_g(solution: Solution) -> Amount:
    taken = (weighed(a.mass_g, a.mass_u_g) for a in solution.aliquots)
    return remaining(weighed(solution.solution_mass_g, solution.solution_mass_u_g), taken)


def require_aliquot_fits(solution: Solution, wanted: Amount, request: TakeAliquot) -> None:
    """An aliquot comes from an available solution and never takes more than remains."""
    require_available(solution)
    left = solution_remaining_g(solution)
    if overdraws(left, wanted):
        raise RuleViolation(
            "gross",
            f"{(request.gross / 1000).normalize()} g",
            f"gives an aliquot of {wanted.value:.5f} g, more than remains of "
            f"{solution.public_id} ({grams(left.value, left.u)})",
        )


def taken_aliquot(
    who: Acting,
    solution: Solution,
    request: TakeAliquot,
    grams: tuple[Decimal, Decimal],
    when: datetime,
    location: Location | None,
) -> Aliquot:
    """The new aliquot's row: the service's, and the benchmark's bulk writer's; its mass
    and uncertainty exactly as its weighing states them (``grams``)."""
    return Aliquot(
        solution=solution,
        solution_id=solution.id,
        mass_g=grams[0],
        mass_u_g=grams[1],
        purpose=request.purpose,
        taken_at=when,
        taken_by=who.operator.code,
        location=location,
        location_id=location.id if location else None,
        created_at=who.now,
    )


def take_aliquot(db: Database, actor: str | None, data: TakeAliquot | Raw) -> Done[AliquotView]:
    """Weigh out part of a solution; its element content follows from the concentration."""
    request = parse(TakeAliquot, data)
    weighing = weigh(request.tare, request.gross, request.readability)
    wanted, (grams, grams_u) = weighing.amount(scale=1e-3), weighing.stored(shift=-3)
    with unit_of_work(db, actor) as uow:
        solution = get_by_id(uow.session, Solution, "solution", request.solution)
        require_aliquot_fits(solution, wanted, request)
        when = action_time(
            uow, request.taken_at, "taken-at", [dissolved(solution)], books=solution.powder.specimen
        )
        location = optional_location(uow, "location", request.location)
        aliquot = taken_aliquot(uow, solution, request, (grams, grams_u), when, location)
        uow.session.add(aliquot)
        element = aliquot_element(aliquot)
        payload = aliquot_payload(aliquot, request, element, queue_label(uow, aliquot))
        return finish(
            uow,
            "aliquot.taken",
            aliquot,
            payload,
            lambda: AliquotView.of(aliquot, element),
            parent=solution,
        )


def aliquot_payload(
    aliquot: Aliquot,
    request: TakeAliquot,
    element: tuple[str, float, float] | None,
    label: str,
) -> dict[str, Any]:
    """What the ``aliquot.taken`` event says (the bench's bulk writer uses it too)."""
    return {
        "solution": aliquot.solution.public_id,
        "mass_g": aliquot.mass_g,
        "mass_u_g": aliquot.mass_u_g,
        "tare_mg": request.tare,
        "gross_mg": request.gross,
        "readability_mg": request.readability,
        "purpose": aliquot.purpose.value,
        "element": element[0] if element else None,
        "element_ug": element[1] if element else None,
        "label": label,
    }


def aliquot_element(
    aliquot: Aliquot, element: str | None = None
) -> tuple[str, float, float] | None:
    """Element in an aliquot (µg) = aliquot mass × the solution's latest concentration of it."""
    concentration = latest_concentration(aliquot.solution, element)
    if concentration is None:
        return None
    amount = element_mass_ug(
        Amount.of(aliquot.mass_g, aliquot.mass_u_g),
        Amount.of(concentration.value_ug_per_g, concentration.u_ug_per_g),
    )
    return concentration.element, amount.value, amount.u
