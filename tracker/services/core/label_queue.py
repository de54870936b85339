"""Queueing a label inside another action's unit of work.

Bench actions that make a new container (drill, dissolve, aliquot, check-in, a
column position) call :func:`queue_label`, so the label row names the very
custody event that made the need for it and no second event is written. This
module imports nothing but models and the unit of work, so every service may
use it.
"""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import select
from sqlalchemy.orm import Session

from tracker.domain.base import HasPublicId
from tracker.domain.models import Label, LabelStatus
from tracker.services.core.uow import UnitOfWork


def queue_label(
    uow: UnitOfWork,
    item: HasPublicId,
    copies: int = 1,
    status: LabelStatus = LabelStatus.QUEUED,
    job_id: int | None = None,
) -> str:
    """Add ``copies`` labels of ``item`` as part of this unit's one custody event.

    The rows are added when the event's number is known (they name it), just before the
    event, so they are among the rows its facts state. The returned status goes into the
    event's payload, so the ledger itself says that a label was queued (or, for a reprint,
    printed).
    """

    def add(seq: int) -> None:
        for _ in range(copies):
            uow.session.add(
                label_row(item, seq, uow.operator.code, uow.now, status=status, job_id=job_id)
            )

    uow.naming_event.append(add)
    return status.value


def label_row(
    item: HasPublicId,
    seq: int,
    by: str,
    at: datetime,
    status: LabelStatus = LabelStatus.QUEUED,
    job_id: int | None = None,
) -> Label:
    """One label of ``item``, naming event ``seq`` that queued it (the one builder of the
    row: ``queue_label``'s hook, and the benchmark's bulk writer)."""
    label = Label(item_ref=item.public_id, status=status, queued_event_seq=seq)
    label.queued_by, label.queued_at, label.job_id = by, at, job_id
    return label


def queued_labels(session: Session, item: str) -> list[Label]:
    """The labels of one item (its public ID) still waiting in the queue."""
    query = select(Label).where(Label.item_ref == item, Label.status == LabelStatus.QUEUED)
    return list(session.scalars(query))
