"""Column chemistry results: what each cut recovered, the column yield, the blank's share.

Yield = recovered / loaded element for sample and reference-material positions; a yield
below the batch's threshold (default 95 %) is flagged because incomplete recovery on
ion-exchange resin fractionates isotopes. Each sample's blank fraction is the batch's
mean procedural blank (ng) over the element the sample loaded; above the batch's limit
(default 1 %) it is flagged, and the δ can be corrected by mass balance when the blank's
own δ is known.
"""

from __future__ import annotations

import statistics
from datetime import datetime
from decimal import Decimal
from typing import Annotated, Any

from pydantic import Field, model_validator
from sqlalchemy import select
from sqlalchemy.orm import selectinload

from tracker.db.database import Database
from tracker.domain.base import decimal_from_float
from tracker.domain.budget import Amount
from tracker.domain.errors import RuleViolation
from tracker.domain.models import BatchPosition, ColumnBatch, Cut, Location, PositionKind
from tracker.services.core.common import finish, optional_location
from tracker.services.core.inputs import FieldProblem, MassMg, Raw, Request, parse
from tracker.services.core.label_queue import queue_label
from tracker.services.core.lookup import get_by_id
from tracker.services.core.uow import Acting, UnitOfWork, unit_of_work
from tracker.services.core.views import Done, View


class CutView(View):
    id: str
    position: str
    name: str
    recovered_ug: float | None
    recovered_u_ug: float | None
    yield_fraction: float | None
    yield_u: float | None


class RecordCut(Request):
    position: str
    cut: Annotated[str, Field(min_length=1, max_length=60)]
    recovered: MassMg | None = None  # element recovered in the cut, with unit ("9.87 ug")
    uncertainty: MassMg | None = None
    relative_uncertainty_percent: Annotated[float, Field(gt=0, lt=100)] | None = None
    location: str | None = None

    @model_validator(mode="after")
    def _consistent(self) -> RecordCut:
        if self.recovered is not None and self.recovered < 0:
            raise FieldProblem("recovered", f"{self.recovered} mg", "must not be negative")
        if self.recovered is None and (self.uncertainty or self.relative_uncertainty_percent):
            raise FieldProblem("uncertainty", None, "give the recovered mass it belongs to")
        if self.uncertainty is not None and self.relative_uncertainty_percent is not None:
            raise FieldProblem(
                "uncertainty", None, "give an uncertainty or a relative one, not both"
            )
        return self

    def recovered_ug(self) -> tuple[Decimal, Decimal] | None:
        if self.recovered is None:
            return None
        return recovered_in_ug(self.recovered, self.uncertainty, self.relative_uncertainty_percent)


def recovered_in_ug(
    recovered: Decimal, uncertainty: Decimal | None, percent: float | None
) -> tuple[Decimal, Decimal]:
    """A cut's recovered element as stored (µg, exactly as typed in mg or µg) and its
    uncertainty: as typed, else the typed percentage of the value, else none."""
    value = recovered.scaleb(3)
    if uncertainty is not None:
        return value, uncertainty.scaleb(3)
    return value, value * decimal_from_float(percent or 0.0) / 100


def column_yield(recovered: Amount, loaded: Amount) -> Amount:
    """recovered / loaded with first-order uncertainty (relative terms in quadrature)."""
    fraction = recovered.value / loaded.value
    relative = ((recovered.u / recovered.value) ** 2 if recovered.value else 0.0) + (
        loaded.u / loaded.value
    ) ** 2
    return Amount(fraction, fraction * relative**0.5)


def record_cut(db: Database, actor: str | None, data: RecordCut | Raw) -> Done[CutView]:
    """Record a collected cut of one column and, for the element's cut, what it recovered."""
    request = parse(RecordCut, data)
    with unit_of_work(db, actor) as uow:
        position = get_by_id(uow.session, BatchPosition, "position", request.position)
        cut = collect(uow, position, request)
        view = lambda: _cut_view(cut)  # noqa: E731
        payload = cut_payload(position, cut, queue_label(uow, cut))
        return finish(uow, "cut.recorded", cut, payload, view, parent=position)


def cut_payload(position: BatchPosition, cut: Cut, label: str) -> dict[str, Any]:
    """What the ``cut.recorded`` event says (the bench's bulk writer uses it too)."""
    return {
        "position": position.public_id,
        "batch": position.batch.public_id,
        "cut": cut.name,
        "recovered_ug": cut.recovered_ug,
        "recovered_u_ug": cut.recovered_u_ug,
        "label": label,
    }


def collect(uow: UnitOfWork, position: BatchPosition, request: RecordCut) -> Cut:
    """Add one cut to a column (part of a unit of work), refusing unknown or repeated cuts."""
    check_cut(position, request)
    cut = cut_row(uow, position, request, optional_location(uow, "location", request.location))
    uow.session.add(cut)
    return cut


def check_cut(position: BatchPosition, request: RecordCut) -> None:
    """A cut the batch collects and the column has not given yet."""
    batch = position.batch
    if not position.in_batch:
        raise RuleViolation(
            "position",
            position.public_id,
            f"was removed from {batch.name} ({position.removal_reason}); "
            "record the cut on the column that holds the material",
        )
    if request.cut not in batch.cut_names:
        raise RuleViolation(
            "cut", request.cut, f"is not one of the batch's cuts ({', '.join(batch.cut_names)})"
        )
    if any(c.name == request.cut for c in position.cuts):
        raise RuleViolation("cut", request.cut, f"is already recorded for {position.public_id}")


def cut_row(
    who: Acting, position: BatchPosition, request: RecordCut, location: Location | None
) -> Cut:
    """The new cut's row: the service's, and the benchmark's bulk writer's."""
    amount = request.recovered_ug()
    return Cut(
        position=position,
        position_id=position.id,
        name=request.cut,
        recovered_ug=amount[0] if amount else None,
        recovered_u_ug=amount[1] if amount else None,
        location=location,
        location_id=location.id if location else None,
        created_at=who.now,
    )


def _cut_view(cut: Cut) -> CutView:
    ratio = cut_yield(cut)
    return CutView(
        id=cut.public_id,
        position=cut.position.public_id,
        name=cut.name,
        recovered_ug=cut.recovered_ug,
        recovered_u_ug=cut.recovered_u_ug,
        yield_fraction=ratio.value if ratio else None,
        yield_u=ratio.u if ratio else None,
    )


def cut_yield(cut: Cut) -> Amount | None:
    position = cut.position
    if cut.recovered_ug is None or not position.loaded_ug or position.kind is PositionKind.BLANK:
        return None
    loaded = Amount(position.loaded_ug, position.loaded_u_ug or 0.0)
    return column_yield(Amount.of(cut.recovered_ug, cut.recovered_u_ug or 0), loaded)


class BlankDelta(Request):
    batch: str
    ratio: Annotated[str, Field(pattern=r"^\d{1,3}/\d{1,3}$")]
    delta_permil: float


def set_blank_delta(db: Database, actor: str | None, data: BlankDelta | Raw) -> Done[BatchSummary]:
    """Record the δ of the batch's procedural blank, enabling the mixing correction."""
    request = parse(BlankDelta, data)
    with unit_of_work(db, actor) as uow:
        batch = get_by_id(uow.session, ColumnBatch, "batch", request.batch)
        batch.blank_deltas = {**batch.blank_deltas, request.ratio: request.delta_permil}
        payload = {"ratio": request.ratio, "delta_permil": request.delta_permil}
        return finish(uow, "batch.blank_delta_set", batch, payload, lambda: _summary(batch))


class PositionLine(View):
    id: str
    slot: int
    kind: str
    holds: str | None  # the aliquot's ID, or the reference material's name
    catalog_number: str | None  # a sample's specimen, as people know it
    loaded_ug: float | None
    recovered_ug: float | None
    yield_fraction: float | None
    yield_u: float | None
    blank_fraction: float | None
    flags: list[str]


class RemovedLine(View):
    """A column taken off the batch: what it held, when and why (its slot is free)."""

    id: str
    slot: int
    kind: str
    holds: str | None
    catalog_number: str | None
    removed_at: datetime
    reason: str


class BatchSummary(View):
    id: str
    name: str
    element: str
    yield_threshold: float
    blank_limit: float
    blank_ng: float | None  # mean procedural blank of the batch
    blank_sd_ng: float | None
    blanks: int
    positions: list[PositionLine]  # the columns in the batch
    removed: list[RemovedLine]  # columns taken off as scanned by mistake
    flags: list[str]
    blank_deltas: dict[str, float]


def element_cut(position: BatchPosition) -> Cut | None:
    """The cut that holds the batch's element (named like the element, else the last cut)."""
    cuts = {c.name: c for c in position.cuts}
    element = position.batch.element
    return cuts.get(element) or next((c for c in reversed(position.cuts)), None)


def blank_ng(batch: ColumnBatch) -> tuple[float | None, float | None, int]:
    """Mean and SD of the batch's procedural blanks, in ng of the element."""
    values = [
        float(c.recovered_ug) * 1000
        for p in batch.positions
        if p.kind is PositionKind.BLANK and p.in_batch
        for c in [element_cut(p)]
        if c is not None and c.recovered_ug is not None
    ]
    if not values:
        return None, None, 0
    spread = statistics.stdev(values) if len(values) > 1 else None
    return statistics.fmean(values), spread, len(values)


def summarize_batch(db: Database, batch_ref: str) -> BatchSummary:
    """Every position of a batch with its yield and blank fraction, flagged against limits."""
    with db.read_session() as session:
        batch = get_by_id(session, ColumnBatch, "batch", batch_ref)
        session.scalars(
            select(ColumnBatch)
            .where(ColumnBatch.id == batch.id)
            .options(selectinload(ColumnBatch.positions).selectinload(BatchPosition.cuts))
        ).one()
        return _summary(batch)


def _summary(batch: ColumnBatch) -> BatchSummary:
    blank, spread, count = blank_ng(batch)
    lines = [_position_line(p, batch, blank) for p in batch.positions if p.in_batch]
    flags = sorted({f for line in lines for f in line.flags})
    if count == 0:
        flags.append("no procedural blank measured")
    return BatchSummary(
        id=batch.public_id,
        name=batch.name,
        element=batch.element,
        yield_threshold=batch.yield_threshold,
        blank_limit=batch.blank_limit,
        blank_ng=blank,
        blank_sd_ng=spread,
        blanks=count,
        positions=lines,
        removed=[_removed_line(p) for p in batch.positions if not p.in_batch],
        flags=flags,
        blank_deltas={k: float(v) for k, v in batch.blank_deltas.items()},
    )


def position_flags(position: BatchPosition) -> list[str]:
    """The batch-level flags of one column (low yield, high blank, recovery not measured)."""
    blank, _, _ = blank_ng(position.batch)
    return _position_line(position, position.batch, blank).flags


def specimen_of(position: BatchPosition) -> str | None:
    """The catalogue number of the specimen a sample column's aliquot came from."""
    aliquot = position.aliquot
    return aliquot.solution.powder.specimen.catalog_number if aliquot is not None else None


def _removed_line(position: BatchPosition) -> RemovedLine:
    assert position.removed_at is not None
    return RemovedLine(
        id=position.public_id,
        slot=position.slot,
        kind=position.kind.value,
        holds=held_by(position),
        catalog_number=specimen_of(position),
        removed_at=position.removed_at,
        reason=position.removal_reason or "",
    )


def held_by(position: BatchPosition) -> str | None:
    """What a column holds: its aliquot's ID, or its reference material's name."""
    if position.aliquot is not None:
        return position.aliquot.public_id
    return position.reference_material.name if position.reference_material else None


def _position_line(
    position: BatchPosition, batch: ColumnBatch, blank: float | None
) -> PositionLine:
    cut = element_cut(position)
    ratio = cut_yield(cut) if cut is not None else None
    flags: list[str] = []
    if ratio is not None and ratio.value < batch.yield_threshold:
        flags.append("low yield")
    fraction = None
    if position.kind is PositionKind.SAMPLE and blank is not None and position.loaded_ug:
        fraction = blank / (position.loaded_ug * 1000)
        if fraction > batch.blank_limit:
            flags.append("high blank")
    if position.kind is not PositionKind.BLANK and (cut is None or cut.recovered_ug is None):
        flags.append("recovery not measured")
    holds = held_by(position)
    return PositionLine(
        id=position.public_id,
        slot=position.slot,
        kind=position.kind.value,
        holds=holds,
        catalog_number=specimen_of(position),
        loaded_ug=position.loaded_ug,
        recovered_ug=cut.recovered_ug if cut else None,
        yield_fraction=ratio.value if ratio else None,
        yield_u=ratio.u if ratio else None,
        blank_fraction=fraction,
        flags=flags,
    )
