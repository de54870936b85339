"""The label queue by hand, the lab's label settings, and reading a scanned label.

Bench actions queue their own labels (see ``label_queue``); these actions are
for everything else: an old vial, a torn label, a reference-material bottle, a
label no longer wanted. ``read_scan`` answers "what is this?" for a scanner.
"""

from __future__ import annotations

from datetime import datetime
from typing import Annotated

from pydantic import Field, field_validator
from sqlalchemy import select
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.ids import looks_like_id
from tracker.domain.labels import LabelFacts, uri_prefix_problem
from tracker.domain.models import Label, LabelStatus, LabSetting
from tracker.services.core.common import finish
from tracker.services.core.inputs import Raw, Request, parse
from tracker.services.core.label_queue import queue_label, queued_labels
from tracker.services.core.lookup import (
    MODEL_BY_KIND,
    URI_PREFIX_KEY,
    find_item,
    forget_uri_prefix,
    get_named,
    prefix_for,
    read_public_id,
    uri_prefix,
)
from tracker.services.core.uow import unit_of_work
from tracker.services.core.views import Done, View
from tracker.services.labels.wording import (
    LABELLED,
    Labelled,
    facts_of,
    label_lines,
    labelled_item,
    labelled_items,
)
from tracker.services.read.lineage import ancestors_of, label_of, scan_options

MAX_ITEMS = 500
MAX_COPIES = 10


class LabelView(View):
    item: str
    kind: str
    status: str
    lines: list[str]
    queued_at: datetime
    queued_by: str
    queued_event: int
    job: str | None


def id_list(value: object) -> list[str]:
    """One ID or several, as typed: a list, or one text with the IDs separated by commas
    (as typed into a form); blanks between commas are ignored; at least one."""
    given = [value] if isinstance(value, str) else list(value)  # type: ignore[call-overload]
    items = [part.strip() for item in given for part in str(item).split(",")]
    if not any(items):
        raise ValueError("name at least one ID")
    return [item for item in items if item]


def resolve_items(session: Session, texts: list[str]) -> list[Labelled]:
    """The labelled rows the IDs name, each once (an ID typed twice in any form is refused)."""
    rows: list[Labelled] = []
    seen: set[str] = set()
    for text, row in zip(texts, labelled_items(session, "items", texts), strict=True):
        if row.public_id in seen:
            raise InputError("items", text, f"names {row.public_id} a second time")
        seen.add(row.public_id)
        rows.append(row)
    return rows


class QueueLabels(Request):
    items: Annotated[list[str], Field(max_length=MAX_ITEMS)]
    copies: Annotated[int, Field(ge=1, le=MAX_COPIES)] = 1

    @field_validator("items", mode="before")
    @classmethod
    def _unique(cls, value: object) -> list[str]:
        return id_list(value)


class QueueAnswer(View):
    items: list[str]  # one entry per label: an item queued with two copies appears twice
    status: str


def queue_labels(db: Database, actor: str | None, data: QueueLabels | Raw) -> Done[QueueAnswer]:
    """Queue labels for items by hand (an old vial, a torn label, a reference bottle)."""
    request = parse(QueueLabels, data)
    with unit_of_work(db, actor) as uow:
        rows = resolve_items(uow.session, request.items)
        for row in rows:
            if queued_labels(uow.session, row.public_id):
                raise RuleViolation("items", row.public_id, "already has a label in the queue")
        for row in rows:
            queue_label(uow, row, request.copies)
        ids = [row.public_id for row in rows]
        payload = {"items": ids, "copies": request.copies}
        answer = QueueAnswer(items=[i for i in ids for _ in range(request.copies)], status="queued")
        uow.mention(*ids)
        return finish(uow, "labels.queued", _one_or_none(ids), payload, lambda: answer)


class CancelLabels(Request):
    items: Annotated[list[str], Field(max_length=MAX_ITEMS)]
    reason: Annotated[str, Field(min_length=3, max_length=4000)]

    @field_validator("items", mode="before")
    @classmethod
    def _unique(cls, value: object) -> list[str]:
        return id_list(value)


def cancel_labels(db: Database, actor: str | None, data: CancelLabels | Raw) -> Done[QueueAnswer]:
    """Take items' queued labels off the queue (the vial left the lab, a label is not wanted)."""
    request = parse(CancelLabels, data)
    with unit_of_work(db, actor) as uow:
        rows = resolve_items(uow.session, request.items)
        cancelled: list[str] = []
        for row in rows:
            labels = queued_labels(uow.session, row.public_id)
            if not labels:
                raise RuleViolation("items", row.public_id, "has no label in the queue")
            for label in labels:
                label.status = LabelStatus.CANCELLED
            cancelled += [row.public_id] * len(labels)
        payload = {"items": cancelled, "reason": request.reason}
        ids = [row.public_id for row in rows]
        answer = QueueAnswer(items=cancelled, status="cancelled")
        uow.mention(*ids)
        return finish(uow, "labels.cancelled", _one_or_none(ids), payload, lambda: answer)


def _one_or_none(ids: list[str]) -> str | None:
    """An event about one item names it; an event about several lists them in its payload."""
    return ids[0] if len(ids) == 1 else None


def list_labels(db: Database, everything: bool = False, limit: int = 1000) -> list[LabelView]:
    """Queued labels in queue order, or with ``everything`` the newest labels of any status."""
    with db.read_session() as session:
        query = select(Label)
        if everything:
            query = query.order_by(Label.id.desc()).limit(limit)
        else:
            query = query.where(Label.status == LabelStatus.QUEUED).order_by(Label.id).limit(limit)
        return [_label_view(session, label) for label in session.scalars(query)]


def _label_view(session: Session, label: Label) -> LabelView:
    facts = facts_of(session, labelled_item(session, "item", label.item_ref))
    return LabelView(
        item=label.item_ref,
        kind=facts.kind,
        status=label.status.value,
        lines=list(facts.lines),
        queued_at=label.queued_at,
        queued_by=label.queued_by,
        queued_event=label.queued_event_seq,
        job=label.job.public_id if label.job is not None else None,
    )


def queued_facts(db: Database) -> list[LabelFacts]:
    """What the queued labels would say, in queue order (for a preview; nothing changes)."""
    with db.read_session() as session:
        query = select(Label).where(Label.status == LabelStatus.QUEUED).order_by(Label.id)
        queue = list(session.scalars(query))
        items = labelled_items(session, "queue", (label.item_ref for label in queue))
        return [facts_of(session, row) for row in items]


def facts_for(db: Database, items: list[str]) -> list[LabelFacts]:
    """What the named items' labels say (for a preview; nothing changes)."""
    with db.read_session() as session:
        return [facts_of(session, row) for row in resolve_items(session, id_list(items))]


class LabelSettings(View):
    uri_prefix: str | None


class SetUriPrefix(Request):
    uri_prefix: Annotated[str, Field(min_length=1)] | None = None

    @field_validator("uri_prefix")
    @classmethod
    def _valid(cls, value: str | None) -> str | None:
        problem = uri_prefix_problem(value) if value is not None else None
        if problem:
            raise ValueError(problem)
        return value


def label_settings(db: Database) -> LabelSettings:
    with db.read_session() as session:
        return LabelSettings(uri_prefix=uri_prefix(session))


def set_uri_prefix(
    db: Database, actor: str | None, data: SetUriPrefix | Raw
) -> Done[LabelSettings]:
    """Set (or with None clear) the URI prefix printed in front of IDs in QR codes (managers)."""
    request = parse(SetUriPrefix, data)
    with unit_of_work(db, actor) as uow:
        uow.require_manager("setting the label URI prefix")
        before = uri_prefix(uow.session)
        if before == request.uri_prefix:
            raise RuleViolation("uri-prefix", request.uri_prefix, "is already the lab's setting")
        row = uow.session.get(LabSetting, URI_PREFIX_KEY) or LabSetting(key=URI_PREFIX_KEY)
        row.value = request.uri_prefix or ""  # cleared: kept empty (workstations delete nothing)
        row.updated_by, row.updated_at = uow.operator.code, uow.now
        uow.session.add(row)
        forget_uri_prefix(uow.session)
        payload = {"uri_prefix": request.uri_prefix, "previous": before}
        view = LabelSettings(uri_prefix=request.uri_prefix)
        return finish(uow, "labels.uri_prefix_set", None, payload, lambda: view)


class ScanView(View):
    scanned: str
    id: str
    kind: str
    what: str
    status: str | None
    location: str | None
    label: list[str]
    ancestors: list[str]


def read_scan(db: Database, scanned: str) -> ScanView:
    """What a scanned (or typed) label names: the ID, its label text, where it is, its lineage."""
    with db.read_session() as session:
        if not scanned.strip():
            raise InputError("scanned", scanned, "is empty; scan a label or type an ID")
        if looks_like_id(scanned, prefix_for(session, scanned)):
            public = read_public_id(session, "scanned", scanned)
            options = scan_options(MODEL_BY_KIND[public.kind])
            row = get_named(session, "scanned", scanned, public, options)
        else:  # typed: a specimen's catalogue number, a loan's reference
            row = find_item(session, "scanned", scanned)
        status = getattr(row, "status", None)
        # a loan or an operator has an ID but wears no label
        lines = label_lines(session, row) if isinstance(row, LABELLED) else []
        location = getattr(row, "location", None)
        return ScanView(
            scanned=scanned,
            id=row.public_id,
            kind=type(row).__name__.lower(),
            what=label_of(row),
            status=status.value if status is not None else None,
            location=location.path if location is not None else None,
            label=lines,
            ancestors=[f"{a.public_id} {label_of(a)}" for a in ancestors_of(row)],
        )
