"""Column chemistry set-up: reference materials, batches and their positions."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date, datetime
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
    LabelStatus,
    PositionKind,
    ReferenceMaterial,
)
from tracker.domain.models.instrument import Measurement
from tracker.services.bench.columns import held_by, specimen_of
from tracker.services.bench.solutions import aliquot_element, on_column_after
from tracker.services.core.common import finish
from tracker.services.core.inputs import Element, FieldProblem, Name, Raw, Request, Text, parse
from tracker.services.core.label_queue import queue_label, queued_labels
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
        slot = next_slot(batch)
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


def next_slot(batch: ColumnBatch) -> int:
    """Where the next column goes: the lowest slot a removed column freed, else after the
    last (the service's, a batch sheet's and the bench's bulk writer's one rule)."""
    held = {p.slot for p in batch.positions if p.in_batch}
    freed = {p.slot for p in batch.positions if not p.in_batch} - held
    return min(freed, default=1 + max(held, default=0))


def check_loadable(aliquot: Aliquot) -> None:
    """An aliquot goes on a column only while available and on no column of any batch
    (a column removed as scanned by mistake no longer holds it)."""
    if aliquot.status is not ContainerStatus.AVAILABLE or any(
        p.in_batch for p in aliquot.positions
    ):
        raise RuleViolation("aliquot", aliquot.public_id, "is already used or not available")


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
        check_loadable(aliquot)
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


class RemovedPositionView(View):
    id: str
    batch: str
    slot: int  # free again for the next column
    kind: str
    holds: str | None  # the aliquot's ID, or the reference material's name
    catalog_number: str | None
    reason: str
    removed_at: datetime
    labels_cancelled: int  # its labels still waiting in the queue, taken off


class RemovePosition(Request):
    position: str
    reason: Text = Field(min_length=3)


def remove_position(
    db: Database, actor: str | None, data: RemovePosition | Raw
) -> Done[RemovedPositionView]:
    """Take a column scanned by mistake off its batch, while nothing is collected from it.

    The row stays, marked removed with the reason (the ledger rebuilds every row, and the
    aliquot's history must still say it was loaded, then removed, and why); its slot is free
    for the next column; its aliquot, never really loaded, is available again; its labels
    still in the queue are cancelled. One event says all of it.
    """
    request = parse(RemovePosition, data)
    with unit_of_work(db, actor) as uow:
        position = get_by_id(uow.session, BatchPosition, "position", request.position)
        check_removable(uow.session, position)
        position.removed_at = uow.now
        position.removal_reason = request.reason
        if position.aliquot is not None and position.aliquot.status is ContainerStatus.CONSUMED:
            position.aliquot.status = ContainerStatus.AVAILABLE
        labels = queued_labels(uow.session, position.public_id)
        for label in labels:
            label.status = LabelStatus.CANCELLED
        view = lambda: _removed_view(position, len(labels))  # noqa: E731
        payload = removal_payload(position, len(labels))
        return finish(uow, "batch.position_removed", position, payload, view, parent=position.batch)


def check_removable(session: Session, position: BatchPosition) -> None:
    """A column comes off only while nothing came out of it: no cut collected, nothing
    measured on the instrument under its ID. Once it has run it stays, and its material is
    set aside by disposing of its cuts."""
    if not position.in_batch:
        removed = position.removed_at.date().isoformat() if position.removed_at else "?"
        raise RuleViolation(
            "position",
            position.public_id,
            f"was already removed from {position.batch.name} on {removed} "
            f"({position.removal_reason}); nothing to do",
        )
    if position.cuts:
        names = ", ".join(c.name for c in position.cuts)
        raise RuleViolation(
            "position",
            position.public_id,
            f"has cuts collected ({names}), so the column ran and stays in its batch; "
            "dispose of its cuts as destroyed, with the reason, instead",
        )
    measured = select(Measurement.id).where(Measurement.position_id == position.id).limit(1)
    if session.scalar(measured) is not None:
        raise RuleViolation(
            "position",
            position.public_id,
            "was measured in an instrument session, so the column ran and stays in its "
            "batch with that measurement; add a new column for what should have been there",
        )


def removal_payload(position: BatchPosition, labels_cancelled: int) -> dict[str, Any]:
    """What the ``batch.position_removed`` event says."""
    return {
        "batch": position.batch.public_id,
        "slot": position.slot,
        "kind": position.kind.value,
        "holds": held_by(position),
        "reason": position.removal_reason,
        "aliquot_status": position.aliquot.status.value if position.aliquot else None,
        "labels_cancelled": labels_cancelled,
    }


def _removed_view(position: BatchPosition, labels_cancelled: int) -> RemovedPositionView:
    assert position.removed_at is not None and position.removal_reason is not None
    return RemovedPositionView(
        id=position.public_id,
        batch=position.batch.public_id,
        slot=position.slot,
        kind=position.kind.value,
        holds=held_by(position),
        catalog_number=specimen_of(position),
        reason=position.removal_reason,
        removed_at=position.removed_at,
        labels_cancelled=labels_cancelled,
    )
