"""Column chemistry: batches of ordered positions (samples, procedural blanks,
reference materials) and the cuts collected from each position."""

from __future__ import annotations

from datetime import date, datetime
from decimal import Decimal
from typing import TYPE_CHECKING, Any

from sqlalchemy import ForeignKey, Index, String, Text, UniqueConstraint, text
from sqlalchemy.orm import Mapped, mapped_column, relationship

from tracker.domain import checks
from tracker.domain.base import Base, HasPublicId
from tracker.domain.ids import Kind
from tracker.domain.models.enums import ContainerStatus, PositionKind, enum_type

if TYPE_CHECKING:
    from tracker.domain.models.instrument import Result
    from tracker.domain.models.material import Aliquot
    from tracker.domain.models.people import Location


class ReferenceMaterial(HasPublicId, Base):
    """A reference material or bracketing standard known to the lab by name."""

    __tablename__ = "reference_material"
    id_kind = Kind.REFERENCE_MATERIAL

    id: Mapped[int] = mapped_column(primary_key=True)
    name: Mapped[str] = mapped_column(String(120), unique=True)
    element: Mapped[str] = mapped_column(String(3))
    matrix: Mapped[str | None] = mapped_column(String(120))
    notes: Mapped[str | None] = mapped_column(Text)
    created_at: Mapped[datetime]


class ColumnBatch(HasPublicId, Base):
    """One run of ion-exchange columns: resin, elution scheme, named cuts, flag thresholds."""

    __tablename__ = "column_batch"
    __table_args__ = (checks.share("yield_threshold"), checks.share("blank_limit"))
    id_kind = Kind.COLUMN_BATCH

    id: Mapped[int] = mapped_column(primary_key=True)
    name: Mapped[str] = mapped_column(String(120))
    performed_on: Mapped[date]
    operator: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"), index=True)
    element: Mapped[str] = mapped_column(String(3))
    resin: Mapped[str] = mapped_column(String(120))
    elution_scheme: Mapped[str] = mapped_column(Text)
    cut_names: Mapped[list[str]]
    yield_threshold: Mapped[float] = mapped_column(default=0.95)
    blank_limit: Mapped[float] = mapped_column(default=0.01)
    # δ (‰) of the procedural blank per ratio, when known: enables the mixing correction
    blank_deltas: Mapped[dict[str, Any]] = mapped_column(default=dict)
    created_at: Mapped[datetime]

    positions: Mapped[list[BatchPosition]] = relationship(
        back_populates="batch", order_by="[BatchPosition.slot, BatchPosition.id]"
    )


# A removed column keeps its row (the ledger and the aliquot's history name it) but frees its
# slot: only columns still in the batch hold a slot (SQLite and PostgreSQL both have partial
# unique indexes).
IN_BATCH_SQL = "removed_at IS NULL"


class BatchPosition(HasPublicId, Base):
    """One column of a batch: a sample aliquot, a procedural blank or a reference material.

    A column scanned by mistake is removed, not deleted (``removed_at``, ``removal_reason``):
    the ledger replays every row, a workstation login holds no DELETE, and the aliquot's
    history must still say it was loaded and then taken off, and why."""

    __tablename__ = "batch_position"
    __table_args__ = (
        Index(
            "uq_batch_position_slot_in_batch",
            "batch_id",
            "slot",
            unique=True,
            sqlite_where=text(IN_BATCH_SQL),
            postgresql_where=text(IN_BATCH_SQL),
        ),
        checks.counted_from_one("slot"),
        checks.not_negative("loaded_ug"),
        checks.not_negative("loaded_u_ug"),
    )
    id_kind = Kind.POSITION

    id: Mapped[int] = mapped_column(primary_key=True)
    batch_id: Mapped[int] = mapped_column(ForeignKey("column_batch.id"), index=True)
    slot: Mapped[int]
    kind: Mapped[PositionKind] = mapped_column(enum_type(PositionKind))
    aliquot_id: Mapped[int | None] = mapped_column(ForeignKey("aliquot.id"), index=True)
    reference_material_id: Mapped[int | None] = mapped_column(
        ForeignKey("reference_material.id"), index=True
    )
    loaded_ug: Mapped[float | None]  # element loaded on the column
    loaded_u_ug: Mapped[float | None]
    created_at: Mapped[datetime]
    removed_at: Mapped[datetime | None]  # taken off the batch (scanned by mistake)
    removal_reason: Mapped[str | None] = mapped_column(Text)

    batch: Mapped[ColumnBatch] = relationship(back_populates="positions")
    aliquot: Mapped[Aliquot | None] = relationship(back_populates="positions")
    reference_material: Mapped[ReferenceMaterial | None] = relationship()
    cuts: Mapped[list[Cut]] = relationship(back_populates="position", order_by="Cut.id")

    @property
    def in_batch(self) -> bool:
        """Still one of its batch's columns (not removed)."""
        return self.removed_at is None


class Cut(HasPublicId, Base):
    """An eluted fraction collected from one position (e.g. the Ca cut)."""

    __tablename__ = "cut"
    __table_args__ = (
        UniqueConstraint("position_id", "name"),
        checks.not_negative("recovered_ug"),
        checks.not_negative("recovered_u_ug"),
    )
    id_kind = Kind.CUT

    id: Mapped[int] = mapped_column(primary_key=True)
    position_id: Mapped[int] = mapped_column(ForeignKey("batch_position.id"), index=True)
    name: Mapped[str] = mapped_column(String(60))
    recovered_ug: Mapped[Decimal | None]
    recovered_u_ug: Mapped[Decimal | None]
    status: Mapped[ContainerStatus] = mapped_column(
        enum_type(ContainerStatus), default=ContainerStatus.AVAILABLE
    )
    location_id: Mapped[int | None] = mapped_column(ForeignKey("location.id"), index=True)
    created_at: Mapped[datetime]

    position: Mapped[BatchPosition] = relationship(back_populates="cuts")
    location: Mapped[Location | None] = relationship()
    results: Mapped[list[Result]] = relationship(viewonly=True, order_by="Result.id")
