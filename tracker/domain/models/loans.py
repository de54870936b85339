"""Loans, their versioned terms, attached documents and shipments."""

from __future__ import annotations

from datetime import date, datetime
from decimal import Decimal
from typing import TYPE_CHECKING

from sqlalchemy import ForeignKey, LargeBinary, String, Text, UniqueConstraint
from sqlalchemy.orm import Mapped, mapped_column, relationship

from tracker.domain import checks
from tracker.domain.base import Base, HasPublicId
from tracker.domain.ids import Kind
from tracker.domain.models.enums import (
    Disposition,
    LoanStatus,
    ShipmentDirection,
    TermsKind,
    enum_type,
)

if TYPE_CHECKING:
    from tracker.domain.models.material import Specimen
    from tracker.domain.models.people import Lender


class Loan(HasPublicId, Base):
    """One loan agreement: a lender's reference, its terms in versions, its specimens."""

    __tablename__ = "loan"
    __table_args__ = (UniqueConstraint("lender_id", "reference"),)
    id_kind = Kind.LOAN

    id: Mapped[int] = mapped_column(primary_key=True)
    lender_id: Mapped[int] = mapped_column(ForeignKey("lender.id"), index=True)
    reference: Mapped[str] = mapped_column(String(80))  # the lender's own loan number
    title: Mapped[str] = mapped_column(String(300))
    borrower: Mapped[str] = mapped_column(String(200))  # the responsible scientist
    received_on: Mapped[date | None]
    status: Mapped[LoanStatus] = mapped_column(enum_type(LoanStatus), default=LoanStatus.OPEN)
    returned_on: Mapped[date | None]
    sr_curve_id: Mapped[int | None] = mapped_column(
        ForeignKey("sr_curve.id"), index=True
    )  # age screening
    created_at: Mapped[datetime]

    lender: Mapped[Lender] = relationship(back_populates="loans")
    terms: Mapped[list[LoanTerms]] = relationship(
        back_populates="loan", order_by="LoanTerms.version"
    )
    specimens: Mapped[list[Specimen]] = relationship(back_populates="loan", order_by="Specimen.id")


class LoanTerms(Base):
    """A complete snapshot of a loan's terms from ``effective_from`` on.

    Version 1 is the original agreement; every amendment adds a new version that
    repeats all terms, so "the terms in force on a date" is one row, never a
    merge of partial changes.
    """

    __tablename__ = "loan_terms"
    __table_args__ = (
        UniqueConstraint("loan_id", "version"),
        checks.counted_from_one("version"),
        checks.above_zero("max_mass_per_specimen_mg"),
        checks.above_zero("max_total_mass_mg"),
        checks.counted_from_one("max_specimens_sampled"),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    loan_id: Mapped[int] = mapped_column(ForeignKey("loan.id"), index=True)
    version: Mapped[int]
    kind: Mapped[TermsKind] = mapped_column(enum_type(TermsKind))
    effective_from: Mapped[date]
    permitted_tissues: Mapped[list[str]]
    max_mass_per_specimen_mg: Mapped[Decimal | None]
    max_total_mass_mg: Mapped[Decimal | None]
    max_specimens_sampled: Mapped[int | None]
    due_on: Mapped[date]
    return_specimens: Mapped[bool] = mapped_column(default=True)
    powder_disposition: Mapped[Disposition] = mapped_column(enum_type(Disposition))
    solution_disposition: Mapped[Disposition] = mapped_column(enum_type(Disposition))
    report_data: Mapped[bool] = mapped_column(default=True)
    acknowledgement: Mapped[bool] = mapped_column(default=True)
    notes: Mapped[str | None] = mapped_column(Text)
    document_id: Mapped[int | None] = mapped_column(ForeignKey("document.id"), index=True)
    recorded_by: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"), index=True)
    recorded_at: Mapped[datetime]

    loan: Mapped[Loan] = relationship(back_populates="terms")
    document: Mapped[Document | None] = relationship()


class Document(HasPublicId, Base):
    """A file kept by content: loan agreements, amendments, condition photos."""

    __tablename__ = "document"
    __table_args__ = (checks.count("size_bytes"),)
    id_kind = Kind.DOCUMENT

    id: Mapped[int] = mapped_column(primary_key=True)
    sha256: Mapped[str] = mapped_column(String(64), unique=True)
    filename: Mapped[str] = mapped_column(String(255))
    media_type: Mapped[str] = mapped_column(String(100))
    size_bytes: Mapped[int]
    content: Mapped[bytes] = mapped_column(LargeBinary, deferred=True)
    added_at: Mapped[datetime]


class LoanDocument(Base):
    """Which documents belong to which loan, and as what (agreement, amendment, photo...)."""

    __tablename__ = "loan_document"
    __table_args__ = (UniqueConstraint("loan_id", "document_id"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    loan_id: Mapped[int] = mapped_column(ForeignKey("loan.id"), index=True)
    document_id: Mapped[int] = mapped_column(ForeignKey("document.id"), index=True)
    role: Mapped[str] = mapped_column(String(40))

    document: Mapped[Document] = relationship()


class Shipment(HasPublicId, Base):
    """A parcel between lender and lab, in either direction."""

    __tablename__ = "shipment"
    id_kind = Kind.SHIPMENT

    id: Mapped[int] = mapped_column(primary_key=True)
    loan_id: Mapped[int] = mapped_column(ForeignKey("loan.id"), index=True)
    direction: Mapped[ShipmentDirection] = mapped_column(enum_type(ShipmentDirection))
    shipped_on: Mapped[date]
    carrier: Mapped[str | None] = mapped_column(String(120))
    tracking: Mapped[str | None] = mapped_column(String(120))
    notes: Mapped[str | None] = mapped_column(Text)
    created_at: Mapped[datetime]


class UserMaterial(HasPublicId, Base):
    """A material the lab defines: a formula, or a measured range of one element's fraction."""

    __tablename__ = "user_material"
    __table_args__ = (
        checks.share("fraction_low"),
        checks.share("fraction_high"),
        checks.ordered("fraction_low", "fraction_high"),
    )
    id_kind = Kind.MATERIAL

    id: Mapped[int] = mapped_column(primary_key=True)
    name: Mapped[str] = mapped_column(String(120), unique=True)
    formula: Mapped[str | None] = mapped_column(String(200))
    element: Mapped[str | None] = mapped_column(String(3))
    fraction_low: Mapped[float | None]
    fraction_high: Mapped[float | None]
    notes: Mapped[str | None] = mapped_column(Text)
    created_at: Mapped[datetime]
