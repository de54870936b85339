"""The label print queue and print jobs.

A ``Label`` row is one physical label: queued by the custody event that made
the need for it (a drill, a check-in ...), then printed by one ``LabelJob``.
Rows are kept after printing, so the table says how many labels of an item
exist and which job printed each; the ledger holds the same story.
"""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import ForeignKey, String, Text
from sqlalchemy.orm import Mapped, mapped_column, relationship

from tracker.domain import checks
from tracker.domain.base import Base, HasPublicId
from tracker.domain.ids import Kind
from tracker.domain.models.enums import LabelJobKind, LabelStatus, enum_type


class LabelJob(HasPublicId, Base):
    """One rendered PDF: which stock, from which position, and the SHA-256 of the file."""

    __tablename__ = "label_job"
    __table_args__ = (
        checks.counted_from_one("start"),
        checks.count("labels"),
        checks.count("pages"),
    )
    id_kind = Kind.PRINT_JOB

    id: Mapped[int] = mapped_column(primary_key=True)
    kind: Mapped[LabelJobKind] = mapped_column(enum_type(LabelJobKind))
    stock: Mapped[str] = mapped_column(String(60))
    start: Mapped[int]  # first label position used on the first sheet, from 1
    labels: Mapped[int]
    pages: Mapped[int]
    sha256: Mapped[str] = mapped_column(String(64))
    printer: Mapped[str | None] = mapped_column(String(120))
    reason: Mapped[str | None] = mapped_column(Text)  # reprints say why
    operator: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"), index=True)
    created_at: Mapped[datetime]

    @property
    def name(self) -> str:
        """How `tracker show` names a job."""
        return f"{self.kind.value} job: {self.labels} label(s) on {self.stock}"


class Label(Base):
    """One label of one item, from the queue to the sheet."""

    __tablename__ = "label"
    __table_args__ = (checks.counted_from_one("queued_event_seq"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    item_ref: Mapped[str] = mapped_column(String(40), index=True)  # the item's public ID
    status: Mapped[LabelStatus] = mapped_column(enum_type(LabelStatus), index=True)
    # The custody event that queued it, by number: the ledger is append-only and verified
    # on its own, so no foreign key ties it to this mutable table (tamper tests delete events).
    queued_event_seq: Mapped[int]
    queued_by: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"), index=True)
    queued_at: Mapped[datetime]
    job_id: Mapped[int | None] = mapped_column(ForeignKey("label_job.id"), index=True)

    job: Mapped[LabelJob | None] = relationship()
