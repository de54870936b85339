"""Bulk twins of the specimen and custody services: add, check in, drill, move, dispose, return.

Each function takes the same request model as its service, checks the same rules with the
same domain functions, and builds the same rows and the same payload; only the database
round trips are gone. ``tests/bench/test_equivalence.py`` proves the twins write what the
services write, table by table and hash by hash.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

from benchmarks.bulk_ctx import Ctx
from tracker.domain.allowance import Usage, check_drill
from tracker.domain.budget import Amount
from tracker.domain.errors import InputError, NotFound, RuleViolation
from tracker.domain.materials import PRESETS, TISSUE_DEFAULTS
from tracker.domain.models import (
    Aliquot,
    Cut,
    LabelStatus,
    Loan,
    LoanStatus,
    Location,
    Powder,
    Solution,
    Specimen,
    SpecimenStatus,
)
from tracker.domain.terms import terms_in_force
from tracker.services.bench.custody import (
    Dispose,
    Move,
    disposed_payload,
    final_status,
    moved_payload,
    require_here,
    residual_weighing,
)
from tracker.services.bench.drilling import (
    Drill,
    drilled_payload,
    drilled_powder,
    limits_of,
    recorded_on,
)
from tracker.services.core.common import (
    checked_in,
    loan_began,
    require_on_hand,
    returned_after,
    weigh,
)
from tracker.services.core.inputs import parse
from tracker.services.loans.specimens import (
    CheckIn,
    NewSpecimen,
    ReturnSpecimen,
    added_payload,
    checked_in_payload,
    listed_specimen,
    returned_payload,
)

Handler = Callable[[Ctx, dict[str, Any]], Any]
MOVABLE = (Specimen, Powder, Solution, Aliquot, Cut)


def add_specimen(ctx: Ctx, args: dict[str, Any]) -> Specimen:
    request = parse(NewSpecimen, args)
    loan = ctx.state.get(Loan, "loan", request.loan)
    if loan.status is not LoanStatus.OPEN:
        raise RuleViolation(
            "loan", loan.reference, f"is {loan.status.value}; it takes no new specimens"
        )
    if any(s.catalog_number == request.catalog_number for s in loan.specimens):
        raise RuleViolation("catalog-number", request.catalog_number, "is already on this loan")
    fields = request.model_dump(exclude={"loan"})
    specimen = ctx.new(listed_specimen(ctx, loan, fields))
    ctx.record("specimen.added", specimen, added_payload(loan, fields), parent=loan)
    return specimen


def check_in(ctx: Ctx, args: dict[str, Any]) -> None:
    request = parse(CheckIn, args)
    specimen = ctx.state.get(Specimen, "specimen", request.specimen)
    if specimen.status is not SpecimenStatus.EXPECTED:
        raise RuleViolation("specimen", specimen.public_id, "it cannot be checked in twice")
    if specimen.loan.status is not LoanStatus.OPEN:
        raise RuleViolation(
            "specimen", specimen.public_id, f"its loan is {specimen.loan.status.value}"
        )
    location = ctx.place(request.location)
    specimen.received_at = ctx.when(request.received_at, "received-at", [loan_began(specimen.loan)])
    specimen.status = SpecimenStatus.ON_HAND
    specimen.condition_in = request.condition
    _put(specimen, location)
    ctx.changed(specimen)
    payload = checked_in_payload(specimen, request, location, LabelStatus.QUEUED.value)
    ctx.record("specimen.checked_in", specimen, payload, parent=specimen.loan, label=specimen)


def return_specimen(ctx: Ctx, args: dict[str, Any]) -> None:
    request = parse(ReturnSpecimen, args)
    specimen = ctx.state.get(Specimen, "specimen", request.specimen)
    require_on_hand(specimen)
    _no_shipment(request.shipment)
    specimen.return_shipment_id = None
    specimen.returned_at = ctx.when(request.returned_at, "returned-at", returned_after(specimen))
    specimen.status = SpecimenStatus.RETURNED
    specimen.condition_out = request.condition
    previous = specimen.location.path if specimen.location else None
    _put(specimen, None)
    ctx.changed(specimen)
    payload = returned_payload(specimen, request, previous, None)
    ctx.record("specimen.returned", specimen, payload, parent=specimen.loan)


def move(ctx: Ctx, args: dict[str, Any]) -> None:
    request = parse(Move, args)
    item = ctx.state.get_any("item", request.item, MOVABLE)
    require_here(item)
    target = ctx.state.get(Location, "to", request.to)
    if item.location_id == target.id:
        raise RuleViolation("to", target.public_id, f"{item.public_id} is already there")
    before = item.location.path if item.location else None
    _put(item, target)
    ctx.changed(item)
    ctx.record("item.moved", item, moved_payload(before, target, request), parent=target)


def dispose(ctx: Ctx, args: dict[str, Any]) -> None:
    request = parse(Dispose, args)
    item = ctx.state.get_any("item", request.item, (Powder, Solution, Aliquot, Cut))
    require_here(item)
    outcome = final_status(request)
    residual = residual_weighing(request, item, outcome)  # the service's own rule
    _no_shipment(request.shipment)
    before = item.location.path if item.location else None
    item.status = outcome
    _put(item, None)
    ctx.changed(item)
    payload = disposed_payload(request, outcome, before, residual, None)
    ctx.record(f"{type(item).__name__.lower()}.{outcome.value}", item, payload)


def drill(ctx: Ctx, args: dict[str, Any]) -> Powder:
    request = parse(Drill, args)
    mass = weigh(request.tare, request.gross, request.readability).amount()
    specimen = ctx.state.get(Specimen, "specimen", request.specimen)
    require_on_hand(specimen)
    when = ctx.when(request.drilled_at, "drilled-at", [checked_in(specimen)])
    terms = terms_in_force(specimen.loan.terms, when.date())
    recorded = recorded_on(specimen.loan.terms, ctx.now.date())
    violations = check_drill(
        limits_of(terms), _usage(specimen), request.tissue, mass, when.date(), recorded
    )
    if violations and not (request.override_reason and ctx.operator.role.value == "manager"):
        raise RuleViolation("drilled-mass", f"{mass.value} mg", violations[0].message)
    if request.override_reason and not violations:
        raise InputError("override-reason", request.override_reason, "nothing to override")
    material = _preset(request.material or TISSUE_DEFAULTS.get(request.tissue))
    location = ctx.place(request.location)
    powder = ctx.new(
        drilled_powder(ctx, specimen, request, mass, material, when, violations, location)
    )
    payload = drilled_payload(powder, specimen, material, terms.version, request, violations)
    payload["label"] = LabelStatus.QUEUED.value
    ctx.record("powder.drilled", powder, payload, parent=specimen, label=powder)
    return powder


def _usage(specimen: Specimen) -> Usage:
    """What the loan and the specimen have given, as ``drilling.usage_of`` sums it in SQL."""
    total = variance = own = own_variance = 0.0
    sampled = 0
    for other in specimen.loan.specimens:
        if other.powders:
            sampled += 1
        for powder in other.powders:
            total += float(powder.mass_mg)
            variance += float(powder.mass_u_mg) ** 2
    for powder in specimen.powders:
        own += float(powder.mass_mg)
        own_variance += float(powder.mass_u_mg) ** 2
    return Usage(
        loan_drilled=Amount(total, math.sqrt(variance)),
        specimen_drilled=Amount(own, math.sqrt(own_variance)),
        sampled_specimens=sampled,
        specimen_already_sampled=bool(specimen.powders),
    )


def _preset(name: str | None) -> str | None:
    if name is None:
        return None
    for preset in PRESETS.values():
        if preset.name.lower() == name.lower():
            return preset.name
    raise NotFound("material", name, "the bulk executor knows the preset materials only")


def _put(item: Any, location: Location | None) -> None:
    item.location = location
    item.location_id = location.id if location else None


def _no_shipment(shipment: str | None) -> None:
    if shipment is not None:
        raise InputError("shipment", shipment, "the bulk executor carries no shipments")


HANDLERS: dict[str, Handler] = {
    "specimen": add_specimen,
    "checkin": check_in,
    "return": return_specimen,
    "move": move,
    "dispose": dispose,
    "drill": drill,
}
