"""Corrections: a recorded measurement fixed by a new record, never by an edit.

A weighing, a concentration or a cut's recovery that was entered wrong is fixed
by a ``Correction`` row and its own custody event. The row keeps the values it
replaces (for the first correction, the original entry), the values now in force,
the reason, who recorded the replaced values and who corrected them, and links to
what it supersedes: the earlier correction of the same entry, and the ledger event
that recorded the replaced values. Like the ledger, the table is append-only
(database triggers refuse UPDATE and DELETE).

The item's own row carries the values in force so every total reads them without
knowing about corrections; the original stays here and in the ledger. Concentrations
are rows already: a corrected concentration is a new row whose ``supersedes_id``
names the row it replaces.
"""

from __future__ import annotations

from datetime import datetime
from typing import Any

from sqlalchemy import ForeignKey, String, Text
from sqlalchemy.orm import Mapped, mapped_column

from tracker.domain import checks
from tracker.domain.base import Base


class Correction(Base):
    __tablename__ = "correction"
    __table_args__ = (
        checks.counted_from_one("entry_id"),
        checks.counted_from_one("supersedes_event_seq"),
        checks.counted_from_one("event_seq"),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    item_ref: Mapped[str] = mapped_column(String(40), index=True)  # PW-, SO-, AQ-, CT- ID
    quantity: Mapped[str] = mapped_column(String(60))  # e.g. "powder mass", "concentration Ca"
    entry_table: Mapped[str] = mapped_column(String(40))  # the table of the corrected entry
    entry_id: Mapped[int]  # its row (for concentrations: the replaced row)
    replaced: Mapped[dict[str, Any]]  # the values as they stood
    value: Mapped[dict[str, Any]]  # the values in force from now on
    reason: Mapped[str] = mapped_column(Text)
    entry_by: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"), index=True)
    supersedes_id: Mapped[int | None] = mapped_column(ForeignKey("correction.id"), index=True)
    # The ledger event that recorded the replaced values (None when it cannot be told).
    supersedes_event_seq: Mapped[int | None]
    event_seq: Mapped[int]  # this correction's own ledger event
    recorded_by: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"), index=True)
    recorded_at: Mapped[datetime]
