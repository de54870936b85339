"""Column chemistry set-up: reference materials, batches and their positions."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date
from typing import Annotated, Any

from pydantic import Field, field_validator, model_validator
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.models import (
    Aliquot,
    BatchPosition,
    ColumnBatch,
    ContainerStatus,
    PositionKind,
    ReferenceMaterial,
)
from tracker.services.bench.columns import specimen_of
from tracker.services.bench.solutions import aliquot_element, on_column_after
from tracker.services.core.common import finish
from tracker.services.core.inputs import Element, FieldProblem, Name, Raw, Request, Text, parse
from tracker.services.core.label_queue import queue_label
from tracker.services.core.lookup import get_by_id, get_reference_material
from tracker.services.core.uow import Acting, UnitOfWork, unit_of_work
from tracker.services.core.views import Done, View


class ReferenceMaterialView(View):
    id: str
    name: str
    element: str
    matrix: str | None


class NewReferenceMaterial(Request):
    name: Name
    element: Element
    matrix: Annotated[str, Field(max_length=120)] | None = None
    notes: Text | None = None


def add_reference_material(
    db: Database, actor: str | None, data: NewReferenceMaterial | Raw
) -> Done[ReferenceMaterialView]:
    """Register a reference material or bracketing standard the lab runs."""
    request = parse(NewReferenceMaterial, data)
    with unit_of_work(db, actor) as uow:
        clash = select(ReferenceMaterial.id).where(
            func.lower(ReferenceMaterial.name) == request.name.lower()
        )
        if uow.session.scalar(clash) is not None:
            raise RuleViolation("name", request.name, "a reference material has this name")
        row = ReferenceMaterial(**request.model_dump(), created_at=uow.now)
        uow.session.add(row)
        return finish(
            uow,
            "reference_material.added",
            row,
            request.model_dump(),
            lambda: ReferenceMaterialView(
                id=row.public_id, name=row.name, element=row.element, matrix=row.matrix
            ),
        )


class BatchView(View):
    id: str
    name: str
    performed_on: date
    element: str
    resin: str
    cut_names: list[str]
    positions: int


class NewBatch(Request):
    name: Name
    performed_on: date
    element: Element
    resin: Annotated[str, Field(min_length=1, max_length=120)]
    elution_scheme: Annotated[str, Field(min_length=1, max_length=4000)]
    cut_names: list[str]
    yield_threshold: Annotated[float, Field(gt=0, le=1)] = 0.95
    blank_limit: Annotated[float, Field(gt=0, lt=1)] = 0.01

    @field_validator("cut_names", mode="before")
    @classmethod
    def _split(cls, value: object) -> list[str]:
        items = value.split(",") if isinstance(value, str) else list(value)  # type: ignore[call-overload]
        names = [str(item).strip() for item in items if str(item).strip()]
        if not names:
            raise ValueError("name at least one cut, e.g. 'matrix,Ca'")
        if len(set(names)) != len(names):
            raise ValueError("cut names must differ")
        return names


def _batch_view(batch: ColumnBatch) -> BatchView:
    return BatchView(
        id=batch.public_id,
        name=batch.name,
        performed_on=batch.performed_on,
        element=batch.element,
        resin=batch.resin,
        cut_names=list(batch.cut_names),
        positions=len(batch.positions),
    )


def opened_batch(who: Acting, request: NewBatch) -> ColumnBatch:
    """The new batch's row, never dated ahead: the service's, and the bulk writer's."""
    if request.performed_on > who.now.date():
        raise InputError("performed-on", request.performed_on.isoformat(), "is in the future")
    return ColumnBatch(**request.model_dump(), operator=who.operator.code, created_at=who.now)


def create_batch(db: Database, actor: str | None, data: NewBatch | Raw) -> Done[BatchView]:
    """Open a column batch: resin, elution scheme and the cuts it will collect."""
    request = parse(NewBatch, data)
    with unit_of_work(db, actor) as uow:
        batch = opened_batch(uow, request)
        uow.session.add(batch)
        view = lambda: _batch_view(batch)  # noqa: E731
        return finish(uow, "batch.created", batch, batch_payload(request), view)


def batch_payload(request: NewBatch) -> dict[str, Any]:
    """What the ``batch.created`` event says (the bench's bulk writer uses it too)."""
    return request.model_dump(mode="json")


class PositionView(View):
    id: str
    batch: str
    slot: int
    kind: str
    holds: str | None  # the aliquot's ID, or the reference material's name
    catalog_number: str | None  # a sample's specimen, as people know it
    loaded_ug: float | None
    loaded_u_ug: float | None


class AddPosition(Request):
    batch: str
    kind: PositionKind
    aliquot: str | None = None
    reference_material: str | None = None
    loaded_ug: Annotated[float, Field(gt=0)] | None = None  # for reference materials
    loaded_u_ug: Annotated[float, Field(ge=0)] | None = None

    @model_validator(mode="after")
    def _holds_right_thing(self) -> AddPosition:
        needs = {PositionKind.SAMPLE: "aliquot", PositionKind.REFERENCE: "reference_material"}
        wanted = needs.get(self.kind)
        for name in ("aliquot", "reference_material"):
            given = getattr(self, name) is not None
            if given != (name == wanted):
                verb = "needs" if name == wanted else "takes no"
                raise FieldProblem(
                    name.replace("_", "-"),
                    getattr(self, name),
                    f"a {self.kind.value} position {verb} {name.replace('_', ' ')}",
                )
        return self


def add_position(db: Database, actor: str | None, data: AddPosition | Raw) -> Done[PositionView]:
    """Put a sample aliquot, a procedural blank or a reference material on the next column."""
    request = parse(AddPosition, data)
    with unit_of_work(db, actor) as uow:
        batch = get_by_id(uow.session, ColumnBatch, "batch", request.batch)
        slot = 1 + max((p.slot for p in batch.positions), default=0)
        position, holds = place(uow, batch, slot, request, holding(uow.session, request))
        payload = position_payload(batch, position, request, holds, queue_label(uow, position))
        return finish(
            uow,
            "batch.position_added",
            position,
            payload,
            lambda: PositionView(
                id=position.public_id,
                batch=batch.public_id,
                slot=slot,
                kind=request.kind.value,
                holds=holds,
                catalog_number=specimen_of(position),
                loaded_ug=position.loaded_ug,
                loaded_u_ug=position.loaded_u_ug,
            ),
            parent=batch,
        )


def position_payload(
    batch: ColumnBatch, position: BatchPosition, request: AddPosition, holds: str | None, label: str
) -> dict[str, Any]:
    """What the ``batch.position_added`` event says (the bench's bulk writer uses it too)."""
    return {
        "batch": batch.public_id,
        "slot": position.slot,
        "kind": request.kind.value,
        "holds": holds,
        "loaded_ug": position.loaded_ug,
        "loaded_u_ug": position.loaded_u_ug,
        "label": label,
    }


@dataclass(frozen=True)
class Holding:
    """What a new column holds, looked up: an aliquot, a reference material, or nothing."""

    aliquot: Aliquot | None = None
    material: ReferenceMaterial | None = None


def holding(session: Session, request: AddPosition) -> Holding:
    """Look up the aliquot or reference material a request names (refused if none is)."""
    return Holding(
        aliquot=get_by_id(session, Aliquot, "aliquot", request.aliquot)
        if request.aliquot
        else None,
        material=get_reference_material(session, "reference-material", request.reference_material)
        if request.reference_material
        else None,
    )


def place(
    uow: UnitOfWork, batch: ColumnBatch, slot: int, request: AddPosition, holds: Holding
) -> tuple[BatchPosition, str | None]:
    """Add one column to a batch (part of a unit of work); returns it and what it holds.

    The caller looks up what it holds (``holding``, or a batch sheet's lookups of all its
    rows at once); the rules here only read those rows and what is loaded with them.
    """
    loaded: tuple[float | None, float | None] = (None, None)
    held = None
    if holds.aliquot is not None:
        aliquot = holds.aliquot
        if aliquot.status is not ContainerStatus.AVAILABLE or aliquot.positions:
            raise RuleViolation("aliquot", aliquot.public_id, "is already used or not available")
        on_column_after(batch, aliquot)
        element = aliquot_element(aliquot, batch.element)
        if element is None:
            raise RuleViolation(
                "aliquot",
                aliquot.public_id,
                f"its solution has no {batch.element} concentration yet; record one first",
            )
        loaded = element[1], element[2]
        held = aliquot.public_id
    if holds.material is not None:
        loaded = request.loaded_ug, request.loaded_u_ug
        held = holds.material.name
    # Built whole, then added: one INSERT. What it loaded is a value derived from measurements,
    # which a workstation login may not UPDATE afterwards outside a correction.
    position = BatchPosition(
        batch=batch,
        slot=slot,
        kind=request.kind,
        aliquot=holds.aliquot,
        reference_material=holds.material,
        loaded_ug=loaded[0],
        loaded_u_ug=loaded[1],
        created_at=uow.now,
    )
    uow.session.add(position)
    if holds.aliquot is not None:
        holds.aliquot.status = ContainerStatus.CONSUMED
    return position, held
