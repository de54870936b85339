"""The custody ledger: append-only, hash-chained events."""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import ForeignKey, Index, String, Text
from sqlalchemy.orm import Mapped, mapped_column

from tracker.domain.base import Base


class CustodyEvent(Base):
    """One recorded action. ``hash`` covers every column but itself (see tracker.domain.ledger)."""

    __tablename__ = "custody_event"
    __table_args__ = (
        Index("ix_custody_event_object_ref", "object_ref"),
        Index("ix_custody_event_parent_ref", "parent_ref"),
    )

    seq: Mapped[int] = mapped_column(primary_key=True, autoincrement=False)
    at: Mapped[datetime]
    operator: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"))
    action: Mapped[str] = mapped_column(String(60))
    object_ref: Mapped[str] = mapped_column(String(40))
    parent_ref: Mapped[str] = mapped_column(String(40), default="")
    payload: Mapped[str] = mapped_column(Text)  # canonical JSON, exactly as hashed
    prev_hash: Mapped[str] = mapped_column(String(64))
    hash: Mapped[str] = mapped_column(String(64), unique=True)


class EventRef(Base):
    """Every further item an event concerns, beyond its object and parent (derived index).

    A manifest import or a print job concerns many items; this table lets an item's
    history find such events without scanning payloads. It is not hashed: it can be
    rebuilt from the payloads at any time.
    """

    __tablename__ = "event_ref"

    seq: Mapped[int] = mapped_column(ForeignKey("custody_event.seq"), primary_key=True)
    ref: Mapped[str] = mapped_column(String(40), primary_key=True, index=True)


class BackdatedEntry(Base):
    """An entry dated further back than the lab's window, accepted from a manager.

    Append-only like the ledger: one row per such entry, naming its event, the item the
    event concerns, the field and both times (stated and recorded), and where it sits on a
    loan's books (``specimen_id``; none for an instrument session, which spans many).
    Reconciliation counts these rows per specimen to flag the loan's lines.
    """

    __tablename__ = "backdated_entry"

    id: Mapped[int] = mapped_column(primary_key=True)
    event_seq: Mapped[int] = mapped_column(unique=True)  # the entry's own ledger event
    item_ref: Mapped[str] = mapped_column(String(40), index=True)  # the event's object
    field: Mapped[str] = mapped_column(String(40))  # e.g. "drilled_at"
    stated_at: Mapped[datetime]
    recorded_at: Mapped[datetime]
    window_hours: Mapped[int]  # the lab's window when it was recorded
    recorded_by: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"))
    loan_id: Mapped[int | None] = mapped_column(ForeignKey("loan.id"), index=True)
    specimen_id: Mapped[int | None] = mapped_column(ForeignKey("specimen.id"), index=True)
