"""Reading the custody ledger: verify the chain, list events, export them as JSON Lines."""

from __future__ import annotations

import json
from collections.abc import Callable, Iterator
from typing import Annotated, TextIO

from pydantic import BaseModel, Field
from sqlalchemy import func, or_, select

from tracker.db.database import Database
from tracker.domain.ledger import LedgerRow, VerifyReport, verify_chain
from tracker.domain.models import CustodyEvent
from tracker.domain.timeutil import iso_utc
from tracker.services.views import EventView

_COLUMNS = (
    CustodyEvent.seq,
    CustodyEvent.at,
    CustodyEvent.operator,
    CustodyEvent.action,
    CustodyEvent.object_ref,
    CustodyEvent.parent_ref,
    CustodyEvent.payload,
    CustodyEvent.prev_hash,
    CustodyEvent.hash,
)
BATCH = 5000


def _rows(db: Database) -> Iterator[LedgerRow]:
    """Stream ledger rows in sequence order without holding them all in memory."""
    with db.engine.connect() as connection:
        result = connection.execution_options(yield_per=BATCH).execute(
            select(*_COLUMNS).order_by(CustodyEvent.seq)
        )
        for row in result:
            yield LedgerRow(*row)


Progress = Callable[[int, int], None]  # (events read, events in the ledger)


def verify(db: Database, progress: Progress | None = None, every: int = 500) -> VerifyReport:
    """Walk the whole chain; the report names the first broken event, if any.

    ``progress`` (optional) is told how far the walk has got every ``every`` events and
    at the end, so a screen can draw a progress bar; it never changes the verdict.
    """
    if progress is None:
        return verify_chain(_rows(db))
    with db.read_session() as session:
        total = session.scalar(select(func.count()).select_from(CustodyEvent)) or 0
    return verify_chain(_counted(_rows(db), total, progress, max(every, 1)))


def _counted(
    rows: Iterator[LedgerRow], total: int, progress: Progress, every: int
) -> Iterator[LedgerRow]:
    done = 0
    progress(0, total)
    for row in rows:
        yield row
        done += 1
        if done % every == 0:
            progress(done, max(total, done))
    progress(done, max(total, done))


def recent_events(
    db: Database,
    limit: int = 50,
    action: str | None = None,
    *,
    operator: str | None = None,
    item: str | None = None,
) -> list[EventView]:
    """Newest events first; optionally those whose action starts with ``action``, recorded by
    ``operator``, or naming ``item`` (a public ID, as the event's object or its parent)."""
    with db.read_session() as session:
        query = select(CustodyEvent).order_by(CustodyEvent.seq.desc()).limit(limit)
        if action:
            query = query.where(CustodyEvent.action.startswith(action))
        if operator:
            query = query.where(CustodyEvent.operator == operator)
        if item:
            query = query.where(
                or_(CustodyEvent.object_ref == item, CustodyEvent.parent_ref == item)
            )
        return [EventView.of(e) for e in session.scalars(query)]


class LedgerLine(BaseModel):
    """One line of an exported ledger (format tracker-ledger/1): every field as hashed."""

    seq: Annotated[int, Field(ge=1)]
    at: Annotated[str, Field(pattern=r"^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}\.\d{6}Z$")]
    operator: str
    action: str
    object: str
    parent: str
    prev_hash: Annotated[str, Field(pattern="^[0-9a-f]{64}$")]
    payload: str  # canonical JSON, exactly the bytes that were hashed
    hash: Annotated[str, Field(pattern="^[0-9a-f]{64}$")]


def export_jsonl(db: Database, out: TextIO) -> int:
    """Write one JSON object per event, fields exactly as hashed; returns the count."""
    count = 0
    for row in _rows(db):
        record = {
            "seq": row.seq,
            "at": row.at if isinstance(row.at, str) else iso_utc(row.at),
            "operator": row.operator,
            "action": row.action,
            "object": row.object_ref,
            "parent": row.parent_ref,
            "prev_hash": row.prev_hash,
            "payload": row.payload,
            "hash": row.hash,
        }
        out.write(json.dumps(record, ensure_ascii=False) + "\n")
        count += 1
    return count
