"""Bulk twins of the solution and column services: dissolve, concentration, aliquot, batch,
position, cut — same request models, same rules and domain arithmetic, same rows and payloads
(see ``bulk_material`` for the contract)."""

from __future__ import annotations

from typing import Any

from benchmarks.bulk_ctx import Ctx
from benchmarks.bulk_material import Handler
from tracker.domain.budget import is_significant, remaining
from tracker.domain.errors import NotFound, RuleViolation
from tracker.domain.ids import Kind, looks_like_id, parse_id
from tracker.domain.models import (
    Aliquot,
    BatchPosition,
    ColumnBatch,
    ContainerStatus,
    Cut,
    LabelStatus,
    Powder,
    ReferenceMaterial,
    Solution,
)
from tracker.services.bench.chemistry import (
    AddPosition,
    NewBatch,
    batch_payload,
    check_loadable,
    next_slot,
    opened_batch,
    position_payload,
)
from tracker.services.bench.columns import RecordCut, check_cut, cut_payload, cut_row
from tracker.services.bench.solutions import (
    Dissolve,
    RecordConcentration,
    TakeAliquot,
    aliquot_element,
    aliquot_payload,
    concentration_payload,
    concentration_row,
    dissolved,
    dissolved_payload,
    dissolved_solution,
    drilled,
    on_column_after,
    portion_to_dissolve,
    require_aliquot_fits,
    taken_aliquot,
)
from tracker.services.core.common import weigh
from tracker.services.core.inputs import parse

QUEUED = LabelStatus.QUEUED.value  # what a bench action's payload says of its new label


def dissolve(ctx: Ctx, args: dict[str, Any]) -> Solution:
    request = parse(Dissolve, args)
    solution_mass = weigh(
        request.vial_tare, request.vial_gross, request.readability, ("vial-tare", "vial-gross")
    )
    powder = ctx.state.get(Powder, "powder", request.powder)
    left, taken = portion_to_dissolve(powder, request)
    if not is_significant(remaining(left, [taken])):
        powder.status = ContainerStatus.CONSUMED
        ctx.changed(powder)
    grams = solution_mass.stored(shift=-3)
    when = ctx.when(request.dissolved_at, "dissolved-at", [drilled(powder)])
    location = ctx.place(request.location)
    solution = ctx.new(dissolved_solution(ctx, powder, request, taken, grams, when, location))
    payload = dissolved_payload(powder, solution, request, QUEUED)
    ctx.record("solution.dissolved", solution, payload, parent=powder, label=solution)
    return solution


def record_concentration(ctx: Ctx, args: dict[str, Any]) -> None:
    request = parse(RecordConcentration, args)
    solution = ctx.state.get(Solution, "solution", request.solution)
    when = ctx.when(request.measured_at, "measured-at", [dissolved(solution)])
    row = ctx.new(concentration_row(ctx, solution, request, when))
    _, payload = concentration_payload(solution, row)
    ctx.record("concentration.recorded", solution, payload)


def take_aliquot(ctx: Ctx, args: dict[str, Any]) -> Aliquot:
    request = parse(TakeAliquot, args)
    weighing = weigh(request.tare, request.gross, request.readability)
    wanted, (grams, grams_u) = weighing.amount(scale=1e-3), weighing.stored(shift=-3)
    solution = ctx.state.get(Solution, "solution", request.solution)
    require_aliquot_fits(solution, wanted, request)
    when = ctx.when(request.taken_at, "taken-at", [dissolved(solution)])
    location = ctx.place(request.location)
    aliquot = ctx.new(taken_aliquot(ctx, solution, request, (grams, grams_u), when, location))
    payload = aliquot_payload(aliquot, request, aliquot_element(aliquot), QUEUED)
    ctx.record("aliquot.taken", aliquot, payload, parent=solution, label=aliquot)
    return aliquot


def create_batch(ctx: Ctx, args: dict[str, Any]) -> ColumnBatch:
    request = parse(NewBatch, args)
    batch = ctx.new(opened_batch(ctx, request))
    ctx.record("batch.created", batch, batch_payload(request))
    return batch


def add_position(ctx: Ctx, args: dict[str, Any]) -> BatchPosition:
    request = parse(AddPosition, args)
    batch = ctx.state.get(ColumnBatch, "batch", request.batch)
    position = BatchPosition(
        batch_id=batch.id, slot=next_slot(batch), kind=request.kind, created_at=ctx.now
    )
    holds = None
    if request.aliquot:
        aliquot = ctx.state.get(Aliquot, "aliquot", request.aliquot)
        check_loadable(aliquot)
        on_column_after(batch, aliquot)
        element = aliquot_element(aliquot, batch.element)
        if element is None:
            raise RuleViolation("aliquot", aliquot.public_id, f"no {batch.element} concentration")
        position.aliquot, position.aliquot_id = aliquot, aliquot.id
        position.loaded_ug, position.loaded_u_ug = element[1], element[2]
        aliquot.status = ContainerStatus.CONSUMED
        ctx.changed(aliquot)
        holds = aliquot.public_id
    if request.reference_material:
        material = _reference(ctx, request.reference_material)
        position.reference_material_id = material.id
        position.loaded_ug, position.loaded_u_ug = request.loaded_ug, request.loaded_u_ug
        holds = material.name
    ctx.new(position)
    position.batch = batch
    payload = position_payload(batch, position, request, holds, QUEUED)
    ctx.record("batch.position_added", position, payload, parent=batch, label=position)
    return position


def _reference(ctx: Ctx, text: str) -> ReferenceMaterial:
    """Like ``lookup.get_reference_material``: by RM- ID or by name, case-insensitive."""
    if looks_like_id(text) and parse_id(text).kind is Kind.REFERENCE_MATERIAL:
        number = parse_id(text).number
        found = [m for m in ctx.state.references.values() if m.id == number]
    else:
        found = [m for key, m in ctx.state.references.items() if key == text.lower()]
    if not found:
        raise NotFound("reference-material", text, "no reference material has this ID or name")
    return found[0]


def record_cut(ctx: Ctx, args: dict[str, Any]) -> Cut:
    request = parse(RecordCut, args)
    position = ctx.state.get(BatchPosition, "position", request.position)
    check_cut(position, request)
    cut = ctx.new(cut_row(ctx, position, request, ctx.place(request.location)))
    payload = cut_payload(position, cut, QUEUED)
    ctx.record("cut.recorded", cut, payload, parent=position, label=cut)
    return cut


HANDLERS: dict[str, Handler] = {
    "dissolve": dissolve,
    "concentration": record_concentration,
    "aliquot": take_aliquot,
    "batch": create_batch,
    "position": add_position,
    "cut": record_cut,
}
