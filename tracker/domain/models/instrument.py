"""Instrument sessions: imported rows in run order, and the results reduced from them."""

from __future__ import annotations

from datetime import datetime
from typing import Any

from sqlalchemy import ForeignKey, String, UniqueConstraint
from sqlalchemy.orm import Mapped, mapped_column, relationship

from tracker.domain.base import Base, HasPublicId
from tracker.domain.ids import Kind
from tracker.domain.models.enums import MeasurementRole, enum_type


class InstrumentSession(HasPublicId, Base):
    """One sitting on a mass spectrometer: bracketing standards, samples, reference materials."""

    __tablename__ = "instrument_session"
    id_kind = Kind.INSTRUMENT_SESSION

    id: Mapped[int] = mapped_column(primary_key=True)
    name: Mapped[str] = mapped_column(String(120))
    instrument: Mapped[str] = mapped_column(String(120))
    element: Mapped[str] = mapped_column(String(3))
    started_at: Mapped[datetime]
    operator: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"))
    bracketing_standard: Mapped[str] = mapped_column(String(120))
    source_filename: Mapped[str | None] = mapped_column(String(255))
    source_sha256: Mapped[str | None] = mapped_column(String(64))
    profile_name: Mapped[str | None] = mapped_column(String(120))
    flags: Mapped[list[str]] = mapped_column(default=list)
    created_at: Mapped[datetime]

    measurements: Mapped[list[Measurement]] = relationship(
        back_populates="session", order_by="Measurement.run_order"
    )


class Measurement(Base):
    """One row of an instrument export, matched (or not) to what it measured."""

    __tablename__ = "measurement"
    __table_args__ = (UniqueConstraint("session_id", "run_order"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    session_id: Mapped[int] = mapped_column(ForeignKey("instrument_session.id"), index=True)
    run_order: Mapped[int]
    sample_name: Mapped[str] = mapped_column(String(200))
    role: Mapped[MeasurementRole] = mapped_column(enum_type(MeasurementRole))
    cut_id: Mapped[int | None] = mapped_column(ForeignKey("cut.id"), index=True)
    reference_material_id: Mapped[int | None] = mapped_column(ForeignKey("reference_material.id"))
    ratios: Mapped[dict[str, Any]]  # {"44/40": 2.1318, ...}
    errors: Mapped[dict[str, Any]] = mapped_column(default=dict)  # internal 2SE per ratio
    excluded_reason: Mapped[str | None] = mapped_column(String(300))
    created_at: Mapped[datetime]

    session: Mapped[InstrumentSession] = relationship(back_populates="measurements")


class Result(Base):
    """A reduced δ value with replicate statistics, for a cut or a reference material."""

    __tablename__ = "result"

    id: Mapped[int] = mapped_column(primary_key=True)
    session_id: Mapped[int] = mapped_column(ForeignKey("instrument_session.id"), index=True)
    cut_id: Mapped[int | None] = mapped_column(ForeignKey("cut.id"), index=True)
    reference_material_id: Mapped[int | None] = mapped_column(ForeignKey("reference_material.id"))
    ratio: Mapped[str] = mapped_column(String(20))
    scale: Mapped[str] = mapped_column(String(120))  # the reference scale, e.g. a standard's name
    delta_permil: Mapped[float]
    sd_permil: Mapped[float | None]
    two_se_permil: Mapped[float | None]
    n: Mapped[int]
    flags: Mapped[list[str]] = mapped_column(default=list)
    created_at: Mapped[datetime]
