"""The custody ledger: append-only, hash-chained events."""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import ForeignKey, Index, String, Text, text
from sqlalchemy.orm import Mapped, mapped_column

from tracker.domain import checks
from tracker.domain.authority import AUTHORITY_SQL, FORMAT_1
from tracker.domain.base import Base


class CustodyEvent(Base):
    """One recorded action. ``hash`` covers every column but itself, ``key_id`` and
    ``signature`` (see tracker.domain.ledger); the signature covers the hash."""

    __tablename__ = "custody_event"
    __table_args__ = (
        Index("ix_custody_event_object_ref", "object_ref"),
        Index("ix_custody_event_parent_ref", "parent_ref"),
        # the few events that say who may sign (tracker.domain.authority), read by every
        # unit of work: a partial index, so the million others cost it nothing
        Index(
            "ix_custody_event_authority",
            "seq",
            sqlite_where=text(AUTHORITY_SQL),
            postgresql_where=text(AUTHORITY_SQL),
        ),
        checks.counted_from_one("seq"),
    )

    seq: Mapped[int] = mapped_column(primary_key=True, autoincrement=False)
    at: Mapped[datetime]
    operator: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"), index=True)
    action: Mapped[str] = mapped_column(String(60))
    object_ref: Mapped[str] = mapped_column(String(40))
    parent_ref: Mapped[str] = mapped_column(String(40), default="")
    payload: Mapped[str] = mapped_column(Text)  # canonical JSON, exactly as hashed
    prev_hash: Mapped[str] = mapped_column(String(64))
    hash: Mapped[str] = mapped_column(String(64), unique=True)
    # the canonical form the hash was computed by; events from before signing keep format 1
    format: Mapped[str] = mapped_column(String(20), server_default=FORMAT_1)
    os_user: Mapped[str] = mapped_column(String(64), server_default="")  # who ran tracker
    host: Mapped[str] = mapped_column(String(255), server_default="")  # on which computer
    db_user: Mapped[str] = mapped_column(String(63), server_default="")  # PostgreSQL login
    key_id: Mapped[str | None] = mapped_column(String(16))  # the signer's key (not hashed)
    signature: Mapped[str | None] = mapped_column(String(128))  # Ed25519 over the hash


# Every stored column of an event, in the order of a ledger tuple
# (:data:`tracker.domain.ledger.LedgerTuple`): what verifying and replaying read.
LEDGER_COLUMNS = (
    CustodyEvent.seq,
    CustodyEvent.at,
    CustodyEvent.operator,
    CustodyEvent.action,
    CustodyEvent.object_ref,
    CustodyEvent.parent_ref,
    CustodyEvent.payload,
    CustodyEvent.prev_hash,
    CustodyEvent.hash,
    CustodyEvent.format,
    CustodyEvent.os_user,
    CustodyEvent.host,
    CustodyEvent.db_user,
    CustodyEvent.key_id,
    CustodyEvent.signature,
)


class EventRef(Base):
    """Every further item an event concerns, beyond its object and parent (derived index).

    A manifest import or a print job concerns many items; this table lets an item's
    history find such events without scanning payloads. It is not hashed: it can be
    rebuilt from the payloads at any time.
    """

    __tablename__ = "event_ref"
    __table_args__ = (checks.counted_from_one("seq"),)

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
    __table_args__ = (checks.counted_from_one("event_seq"), checks.count("window_hours"))

    id: Mapped[int] = mapped_column(primary_key=True)
    event_seq: Mapped[int] = mapped_column(unique=True)  # the entry's own ledger event
    item_ref: Mapped[str] = mapped_column(String(40), index=True)  # the event's object
    field: Mapped[str] = mapped_column(String(40))  # e.g. "drilled_at"
    stated_at: Mapped[datetime]
    recorded_at: Mapped[datetime]
    window_hours: Mapped[int]  # the lab's window when it was recorded
    recorded_by: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"), index=True)
    loan_id: Mapped[int | None] = mapped_column(ForeignKey("loan.id"), index=True)
    specimen_id: Mapped[int | None] = mapped_column(ForeignKey("specimen.id"), index=True)
