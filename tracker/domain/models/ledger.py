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


class EventItem(Base):
    """An item an event acted on besides its ``object_ref`` (one batch sheet makes many).

    Lets an item's history find events that name it only in their payload. The
    pairs are derivable from the payloads, which the hash chain protects; the table
    is append-only like the ledger.
    """

    __tablename__ = "event_item"

    seq: Mapped[int] = mapped_column(primary_key=True, autoincrement=False)
    item_ref: Mapped[str] = mapped_column(String(40), primary_key=True, index=True)
