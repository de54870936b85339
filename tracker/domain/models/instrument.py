"""Instrument sessions: imported rows in run order, and the results reduced from them."""

from __future__ import annotations

from datetime import datetime
from typing import Any

from sqlalchemy import ForeignKey, String, UniqueConstraint
from sqlalchemy.orm import Mapped, mapped_column, relationship

from tracker.domain import checks
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
    operator: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"), index=True)
    bracketing_standard: Mapped[str] = mapped_column(String(120))
    mode: Mapped[str] = mapped_column(String(10), default="delta")  # delta or ratio
    ratio_names: Mapped[list[str]] = mapped_column(default=list)
    # ratio mode: the bracketing standard's accepted ratio per ratio name
    standard_values: Mapped[dict[str, Any]] = mapped_column(default=dict)
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
    __table_args__ = (UniqueConstraint("session_id", "run_order"), checks.count("run_order"))

    id: Mapped[int] = mapped_column(primary_key=True)
    session_id: Mapped[int] = mapped_column(ForeignKey("instrument_session.id"), index=True)
    run_order: Mapped[int]
    sample_name: Mapped[str] = mapped_column(String(200))
    role: Mapped[MeasurementRole] = mapped_column(enum_type(MeasurementRole))
    cut_id: Mapped[int | None] = mapped_column(ForeignKey("cut.id"), index=True)
    reference_material_id: Mapped[int | None] = mapped_column(
        ForeignKey("reference_material.id"), index=True
    )
    position_id: Mapped[int | None] = mapped_column(
        ForeignKey("batch_position.id"), index=True
    )  # blanks
    ratios: Mapped[dict[str, Any]]  # {"44/40": 2.1318, ...}
    errors: Mapped[dict[str, Any]] = mapped_column(default=dict)  # internal 2SE per ratio
    excluded_reason: Mapped[str | None] = mapped_column(String(300))
    created_at: Mapped[datetime]

    session: Mapped[InstrumentSession] = relationship(back_populates="measurements")


class Result(Base):
    """A reduced δ value with replicate statistics, for a cut or a reference material.

    One row per target and ratio of a session: a later reduction (or a correction of a value
    it used) computes the row again in place, never deleting it (``RECOMPUTED`` columns).
    """

    __tablename__ = "result"
    __table_args__ = (
        checks.ratio_positive("delta_permil", "kind"),
        checks.not_negative("sd_permil"),
        checks.not_negative("two_se_permil"),
        checks.counted_from_one("n"),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    session_id: Mapped[int] = mapped_column(ForeignKey("instrument_session.id"), index=True)
    cut_id: Mapped[int | None] = mapped_column(ForeignKey("cut.id"), index=True)
    reference_material_id: Mapped[int | None] = mapped_column(
        ForeignKey("reference_material.id"), index=True
    )
    position_id: Mapped[int | None] = mapped_column(ForeignKey("batch_position.id"), index=True)
    ratio: Mapped[str] = mapped_column(String(20))
    scale: Mapped[str] = mapped_column(String(120))  # the reference scale, e.g. a standard's name
    kind: Mapped[str] = mapped_column(String(10), default="delta")  # delta (‰) or ratio
    delta_permil: Mapped[float]  # the value: δ in ‰, or the corrected ratio in ratio mode
    blank_corrected: Mapped[bool] = mapped_column(default=False)
    sd_permil: Mapped[float | None]
    two_se_permil: Mapped[float | None]
    n: Mapped[int]
    flags: Mapped[list[str]] = mapped_column(default=list)
    created_at: Mapped[datetime]


# What a reduction computes again in a stored result row; the rest names the row's target.
RECOMPUTED = (
    "delta_permil",
    "sd_permil",
    "two_se_permil",
    "n",
    "blank_corrected",
    "flags",
    "scale",
    "kind",
    "created_at",
)


class MappingProfile(Base):
    """How to read one instrument's export: which column holds what (saved by name)."""

    __tablename__ = "mapping_profile"

    id: Mapped[int] = mapped_column(primary_key=True)
    name: Mapped[str] = mapped_column(String(120), unique=True)
    kind: Mapped[str] = mapped_column(String(20), default="instrument")  # or "manifest"
    definition: Mapped[dict[str, Any]]
    created_at: Mapped[datetime]


class ReferenceValue(Base):
    """An accepted value of a reference material on a scale; the newest row is in force."""

    __tablename__ = "reference_value"
    __table_args__ = (checks.ratio_positive("value", "kind"), checks.above_zero("two_sd"))

    id: Mapped[int] = mapped_column(primary_key=True)
    reference_material_id: Mapped[int] = mapped_column(
        ForeignKey("reference_material.id"), index=True
    )
    ratio: Mapped[str] = mapped_column(String(20))
    scale: Mapped[str] = mapped_column(String(120))
    kind: Mapped[str] = mapped_column(String(10), default="delta")
    value: Mapped[float]
    two_sd: Mapped[float]  # tolerance: 2SD of the lab's long-term record
    source: Mapped[str] = mapped_column(String(500))
    recorded_by: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"), index=True)
    created_at: Mapped[datetime]


class SrCurve(Base):
    """A user-supplied ⁸⁷Sr/⁸⁶Sr reference curve (age, ratio, u), kept with its file's hash."""

    __tablename__ = "sr_curve"

    id: Mapped[int] = mapped_column(primary_key=True)
    name: Mapped[str] = mapped_column(String(120), unique=True)
    points: Mapped[list[Any]]  # [[age_ma, ratio, u], ...] sorted by age
    source_sha256: Mapped[str] = mapped_column(String(64))
    note: Mapped[str | None] = mapped_column(String(500))
    created_at: Mapped[datetime]
