"""What a corrected value changes further down: element loaded on columns, reduced results.

Totals that are computed when read (reconciliation, element in a solution, plans)
follow a correction by themselves. Two are stored when made: the element a sample
aliquot loaded on its column (aliquot mass × concentration) and a session's reduced
results (yield flags and blank corrections use recoveries and loads). A correction
recomputes both in its own unit of work, so they too use the latest values.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

from sqlalchemy import or_, select

from tracker.domain.models import (
    Aliquot,
    BatchPosition,
    Cut,
    InstrumentSession,
    Measurement,
    PositionKind,
    Result,
)
from tracker.services.bench.solutions import aliquot_element
from tracker.services.core.uow import UnitOfWork
from tracker.services.instrument.reduction import recompute


def refresh_loaded(aliquots: Iterable[Aliquot]) -> tuple[list[dict[str, Any]], set[int]]:
    """Recompute the element each sample aliquot loaded; return the changes and their batches."""
    changes: list[dict[str, Any]] = []
    batches: set[int] = set()
    for aliquot in aliquots:
        for position in aliquot.positions:
            if position.kind is not PositionKind.SAMPLE:
                continue
            element = aliquot_element(aliquot, position.batch.element)
            if element is None:
                continue
            before = position.loaded_ug
            position.loaded_ug, position.loaded_u_ug = element[1], element[2]
            if before != position.loaded_ug:
                changes.append({"position": position.public_id, "loaded_ug": [before, element[1]]})
                batches.add(position.batch_id)
    return changes, batches


def rereduce(uow: UnitOfWork, batch_ids: set[int]) -> list[str]:
    """Reduce again every already-reduced session that measured a column of these batches."""
    if not batch_ids:
        return []
    sql = uow.session
    sql.flush()
    positions = select(BatchPosition.id).where(BatchPosition.batch_id.in_(batch_ids))
    cuts = select(Cut.id).where(Cut.position_id.in_(positions))
    measured = select(Measurement.session_id).where(
        or_(Measurement.cut_id.in_(cuts), Measurement.position_id.in_(positions))
    )
    reduced = select(Result.session_id)
    sessions = sql.scalars(
        select(InstrumentSession)
        .where(InstrumentSession.id.in_(measured), InstrumentSession.id.in_(reduced))
        .order_by(InstrumentSession.id)
    ).all()
    for session in sessions:
        recompute(sql, session, uow.now)
    return [s.public_id for s in sessions]
