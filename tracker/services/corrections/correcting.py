"""What every correction shares: the entry as it stands, who may correct it, the record.

A correction never edits history: it adds a :class:`Correction` row and one custody
event that name the entry, the values replaced, the values now in force, the reason,
and what they supersede (the earlier correction, and the ledger event that recorded
the replaced values). Correcting someone else's entry needs a manager.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime
from decimal import Decimal
from typing import Any

from sqlalchemy import or_, select
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.base import HasPublicId, decimal_text
from tracker.domain.errors import InputError
from tracker.domain.models import Concentration, Correction, CustodyEvent, EventRef
from tracker.services.core.common import finish
from tracker.services.core.lookup import get_any
from tracker.services.core.uow import UnitOfWork
from tracker.services.core.views import Done, View


class CorrectionView(View):
    item: str
    quantity: str
    replaced: dict[str, Any]
    value: dict[str, Any]
    reason: str
    entry_by: str
    supersedes_event: int | None
    effects: dict[str, Any]


class CorrectionRecord(CorrectionView):
    recorded_by: str
    recorded_at: datetime
    event_seq: int


@dataclass(frozen=True)
class Entry:
    """The entry about to be corrected, as it stands now."""

    item: HasPublicId  # the labelled item (a concentration's solution)
    quantity: str  # "powder mass", "solution mass", "concentration Ca", ...
    table: str
    row_id: int
    values: dict[str, Any]
    author: str  # who recorded the values in force
    event_seq: int | None  # the ledger event that recorded them
    previous: Correction | None


def latest_correction(session: Session, item_ref: str, quantity: str) -> Correction | None:
    return session.scalars(
        select(Correction)
        .where(Correction.item_ref == item_ref, Correction.quantity == quantity)
        .order_by(Correction.id.desc())
        .limit(1)
    ).first()


def first_event(session: Session, item_ref: str) -> CustodyEvent | None:
    """The event that made an item: the first to name it, directly or in its item list."""
    linked = select(EventRef.seq).where(EventRef.ref == item_ref)
    return session.scalars(
        select(CustodyEvent)
        .where(or_(CustodyEvent.object_ref == item_ref, CustodyEvent.seq.in_(linked)))
        .order_by(CustodyEvent.seq)
        .limit(1)
    ).first()


def concentration_event(session: Session, row: Concentration) -> int | None:
    """The event that recorded a concentration row (same time, same solution, that action)."""
    return session.scalar(
        select(CustodyEvent.seq).where(
            CustodyEvent.object_ref == row.solution.public_id,
            CustodyEvent.action == "concentration.recorded",
            CustodyEvent.at == row.created_at,
        )
    )


def entry_of(
    session: Session,
    item: HasPublicId,
    quantity: str,
    table: str,
    row_id: int,
    values: dict[str, Any],
    original: tuple[str, int | None],
) -> Entry:
    """The entry with its author and event: the last correction's, else the original's."""
    previous = latest_correction(session, item.public_id, quantity)
    author, seq = (previous.recorded_by, previous.event_seq) if previous else original
    return Entry(item, quantity, table, row_id, values, author, seq, previous)


def authorise(uow: UnitOfWork, entry: Entry) -> None:
    """Anyone corrects their own entries; another operator's need a manager."""
    if entry.author != uow.operator.code:
        uow.require_manager(f"correcting {entry.quantity} recorded by {entry.author}")


def require_change(entry: Entry, value: dict[str, Any], field: str, shown: str) -> None:
    if all(entry.values.get(key) == number for key, number in value.items()):
        raise InputError(field, shown, f"is what {entry.item.public_id} already holds")


def stated(values: dict[str, Any]) -> dict[str, Any]:
    """Values as a correction keeps them (its row's JSON, its event): an exact measured
    value as its digits, the way the facts state it."""
    return {k: decimal_text(v) if isinstance(v, Decimal) else v for k, v in values.items()}


def finish_correction(
    uow: UnitOfWork,
    action: str,
    entry: Entry,
    change: tuple[dict[str, Any], str],
    effects: dict[str, Any],
) -> Done[CorrectionView]:
    """Record the correction row and its one event (the row names the event), commit."""
    value, reason = stated(change[0]), change[1]
    replaced = stated(entry.values)

    def add(seq: int) -> None:
        uow.session.add(
            Correction(
                item_ref=entry.item.public_id,
                quantity=entry.quantity,
                entry_table=entry.table,
                entry_id=entry.row_id,
                replaced=replaced,
                value=value,
                reason=reason,
                entry_by=entry.author,
                supersedes_id=entry.previous.id if entry.previous else None,
                supersedes_event_seq=entry.event_seq,
                event_seq=seq,
                recorded_by=uow.operator.code,
                recorded_at=uow.now,
            )
        )

    uow.naming_event.append(add)
    view = CorrectionView(
        item=entry.item.public_id,
        quantity=entry.quantity,
        replaced=replaced,
        value=value,
        reason=reason,
        entry_by=entry.author,
        supersedes_event=entry.event_seq,
        effects=effects,
    )
    payload = view.model_dump() | {
        "supersedes_correction": entry.previous.id if entry.previous else None
    }
    return finish(uow, action, entry.item, payload, lambda: view)


def list_corrections(db: Database, item: str | None = None) -> list[CorrectionRecord]:
    """Every correction (of one item, when given), oldest first."""
    with db.read_session() as session:
        query = select(Correction).order_by(Correction.id)
        if item is not None:
            query = query.where(Correction.item_ref == get_any(session, "ITEM", item).public_id)
        return [_record_view(row) for row in session.scalars(query)]


def _record_view(row: Correction) -> CorrectionRecord:
    return CorrectionRecord(
        item=row.item_ref,
        quantity=row.quantity,
        replaced=row.replaced,
        value=row.value,
        reason=row.reason,
        entry_by=row.entry_by,
        supersedes_event=row.supersedes_event_seq,
        effects={},
        recorded_by=row.recorded_by,
        recorded_at=row.recorded_at,
        event_seq=row.event_seq,
    )
