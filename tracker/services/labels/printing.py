"""Print jobs: the queue printed, or named items printed again, each with one custody event.

The service holds the writer lock while it reads the queue, has the labels
rendered (by a renderer the caller passes in: services never draw), records
the document's SHA-256 and marks the labels printed — so the set of labels in
the PDF is exactly the set marked printed, even with several workstations.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable, Sequence
from typing import Annotated, Any

from pydantic import Field, field_validator
from sqlalchemy import select
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.errors import RuleViolation
from tracker.domain.labels import PrintBatch, Rendered
from tracker.domain.models import Label, LabelJob, LabelJobKind, LabelStatus
from tracker.services.core.common import finish
from tracker.services.core.inputs import Raw, Request, parse
from tracker.services.core.label_queue import queue_label
from tracker.services.core.uow import UnitOfWork, unit_of_work
from tracker.services.core.views import Done, View
from tracker.services.labels.handling import MAX_ITEMS, id_list, resolve_items
from tracker.services.labels.wording import Labelled, facts_of, labelled_items

Renderer = Callable[[PrintBatch], Rendered]
StockName = Annotated[str, Field(min_length=1, max_length=60, pattern=r"^[A-Za-z0-9._-]+$")]
# A print queue name as lp takes it: no spaces, slashes or '#', and no leading '-' (which
# lp would read as an option).
PrinterName = Annotated[str, Field(min_length=1, max_length=120, pattern=r"^[^\s/#-][^\s/#]*$")]


class JobView(View):
    id: str
    kind: str
    stock: str
    start: int
    labels: int
    pages: int
    sha256: str
    items: list[str]
    printer: str | None
    reason: str | None

    @classmethod
    def of(cls, job: LabelJob, items: list[str]) -> JobView:
        return cls(
            id=job.public_id,
            kind=job.kind.value,
            stock=job.stock,
            start=job.start,
            labels=job.labels,
            pages=job.pages,
            sha256=job.sha256,
            items=items,
            printer=job.printer,
            reason=job.reason,
        )


class PrintQueue(Request):
    stock: StockName
    start: Annotated[int, Field(ge=1)] = 1
    printer: PrinterName | None = None
    # Only these items' queued labels (the rest stay queued); None: the whole queue
    items: Annotated[list[str], Field(max_length=MAX_ITEMS)] | None = None

    @field_validator("items", mode="before")
    @classmethod
    def _some(cls, value: object) -> list[str] | None:
        return None if value is None else id_list(value)


class Reprint(PrintQueue):
    items: Annotated[list[str], Field(max_length=MAX_ITEMS)]
    reason: Annotated[str, Field(min_length=3, max_length=4000)]

    @field_validator("items", mode="before")
    @classmethod
    def _unique(cls, value: object) -> list[str]:
        return id_list(value)


def print_queue(
    db: Database, actor: str | None, data: PrintQueue | Raw, render: Renderer
) -> Done[JobView]:
    """Render every queued label in queue order and mark them printed by one job."""
    request = parse(PrintQueue, data)
    with unit_of_work(db, actor) as uow:
        query = select(Label).where(Label.status == LabelStatus.QUEUED).order_by(Label.id)
        labels = list(uow.session.scalars(query))
        if not labels:
            raise RuleViolation("queue", None, "no labels are queued; nothing to print")
        if request.items is not None:
            labels = _chosen(uow.session, labels, request.items)
        items = labelled_items(uow.session, "queue", (label.item_ref for label in labels))
        job = _render_job(uow, request, LabelJobKind.PRINT, items, render)
        for label in labels:
            label.status, label.job = LabelStatus.PRINTED, job
        return _finish_job(uow, job, items, request)


def _chosen(session: Session, queued: list[Label], items: list[str]) -> list[Label]:
    """The queued labels of the items named, in queue order; an item with no queued label
    is refused by name (nothing is printed)."""
    wanted = {row.public_id for row in resolve_items(session, items)}
    chosen = [label for label in queued if label.item_ref in wanted]
    missing = sorted(wanted - {label.item_ref for label in chosen})
    if missing:
        raise RuleViolation("items", ", ".join(missing), "has no queued label to print")
    return chosen


def reprint(
    db: Database, actor: str | None, data: Reprint | Raw, render: Renderer
) -> Done[JobView]:
    """Print named items' labels again (torn, smudged, lost), saying why; the queue is untouched."""
    request = parse(Reprint, data)
    with unit_of_work(db, actor) as uow:
        items = resolve_items(uow.session, request.items)
        job = _render_job(uow, request, LabelJobKind.REPRINT, items, render)
        for item in items:
            queue_label(uow, item, status=LabelStatus.PRINTED, job_id=job.id)
        return _finish_job(uow, job, items, request)


def _render_job(
    uow: UnitOfWork,
    request: PrintQueue,
    kind: LabelJobKind,
    items: Sequence[Labelled],
    render: Renderer,
) -> LabelJob:
    """Create the job (its ID goes into the document), render, and keep the document's hash."""
    job = LabelJob(
        kind=kind,
        stock=request.stock,
        start=request.start,
        labels=len(items),
        pages=0,
        sha256="",
        printer=request.printer,
        reason=getattr(request, "reason", None),
        operator=uow.operator.code,
        created_at=uow.now,
    )
    uow.session.add(job)
    uow.session.flush()
    facts = tuple(facts_of(uow.session, item) for item in items)
    rendered = render(PrintBatch(job=job.public_id, labels=facts))
    job.sha256 = hashlib.sha256(rendered.content).hexdigest()
    job.pages = rendered.pages
    return job


def _finish_job(
    uow: UnitOfWork, job: LabelJob, items: Sequence[Labelled], request: PrintQueue
) -> Done[JobView]:
    ids = [item.public_id for item in items]
    payload: dict[str, Any] = {
        "kind": job.kind.value,
        "items": ids,
        "stock": job.stock,
        "start": job.start,
        "pages": job.pages,
        "sha256": job.sha256,
        "printer": job.printer,
        "reason": job.reason,
    }
    action = "labels.printed" if job.kind is LabelJobKind.PRINT else "labels.reprinted"
    uow.mention(*ids)
    return finish(uow, action, job, payload, lambda: JobView.of(job, ids))
