"""The lineage of material: specimen → drilled powder → solution → aliquot.

Each row is a physical container with a public ID (on its label), a location
and a status. Masses are stored in the unit named by the column and each comes
with its standard uncertainty (``*_u_*``, k = 1).
"""

from __future__ import annotations

from datetime import datetime
from decimal import Decimal
from typing import TYPE_CHECKING, Any

from sqlalchemy import ForeignKey, String, Text, UniqueConstraint
from sqlalchemy.orm import Mapped, mapped_column, relationship

from tracker.domain import checks
from tracker.domain.base import Base, HasPublicId
from tracker.domain.ids import Kind
from tracker.domain.models.enums import (
    AliquotPurpose,
    ContainerStatus,
    SpecimenStatus,
    enum_type,
)

if TYPE_CHECKING:
    from tracker.domain.models.chemistry import BatchPosition
    from tracker.domain.models.loans import Document, Loan
    from tracker.domain.models.people import Location


class Specimen(HasPublicId, Base):
    """A lent object. Descriptive columns use Darwin Core term meanings where one exists."""

    __tablename__ = "specimen"
    __table_args__ = (
        UniqueConstraint("loan_id", "catalog_number"),
        checks.not_negative("age_max_ma"),
        checks.not_negative("age_min_ma"),
        checks.ordered("age_min_ma", "age_max_ma"),
    )
    id_kind = Kind.SPECIMEN

    id: Mapped[int] = mapped_column(primary_key=True)
    loan_id: Mapped[int] = mapped_column(ForeignKey("loan.id"), index=True)
    catalog_number: Mapped[str] = mapped_column(String(80))  # dwc:catalogNumber
    institution_code: Mapped[str | None] = mapped_column(String(40))  # dwc:institutionCode
    collection_code: Mapped[str | None] = mapped_column(String(40))  # dwc:collectionCode
    scientific_name: Mapped[str | None] = mapped_column(String(200))  # dwc:scientificName
    skeletal_element: Mapped[str | None] = mapped_column(String(120))  # e.g. tooth, shell
    locality: Mapped[str | None] = mapped_column(String(300))  # dwc:locality
    formation: Mapped[str | None] = mapped_column(String(120))  # dwc:formation
    earliest_epoch: Mapped[str | None] = mapped_column(
        String(60)
    )  # dwc:earliestEpochOrLowestSeries
    latest_epoch: Mapped[str | None] = mapped_column(String(60))  # dwc:latestEpochOrHighestSeries
    age_max_ma: Mapped[float | None]  # oldest stratigraphic age, Ma
    age_min_ma: Mapped[float | None]  # youngest stratigraphic age, Ma
    # Other terms of the lender's list: as large as a lender's row (within the caps in
    # domain/darwincore.py), read only by exports and manifest updates, which undefer them;
    # any other load of specimens (a loan's tree, reports, scans) leaves them in the database.
    extra: Mapped[dict[str, Any]] = mapped_column(default=dict, deferred=True)
    status: Mapped[SpecimenStatus] = mapped_column(
        enum_type(SpecimenStatus), default=SpecimenStatus.EXPECTED
    )
    condition_in: Mapped[str | None] = mapped_column(Text)
    condition_out: Mapped[str | None] = mapped_column(Text)
    received_at: Mapped[datetime | None]
    returned_at: Mapped[datetime | None]
    return_shipment_id: Mapped[int | None] = mapped_column(ForeignKey("shipment.id"), index=True)
    location_id: Mapped[int | None] = mapped_column(ForeignKey("location.id"), index=True)
    created_at: Mapped[datetime]

    loan: Mapped[Loan] = relationship(back_populates="specimens")
    location: Mapped[Location | None] = relationship()
    powders: Mapped[list[Powder]] = relationship(back_populates="specimen", order_by="Powder.id")


class Powder(HasPublicId, Base):
    """Powder drilled from one tissue of a specimen; its mass by difference of two weighings."""

    __tablename__ = "powder"
    __table_args__ = (
        checks.above_zero("tare_mg"),
        checks.heavier("gross_mg", "tare_mg"),
        checks.above_zero("readability_mg"),
        checks.above_zero("mass_mg"),
        checks.not_negative("mass_u_mg"),
        checks.not_negative("residual_mg"),
        checks.not_negative("residual_u_mg"),
    )
    id_kind = Kind.POWDER

    id: Mapped[int] = mapped_column(primary_key=True)
    specimen_id: Mapped[int] = mapped_column(ForeignKey("specimen.id"), index=True)
    tissue: Mapped[str] = mapped_column(String(60))  # enamel, enameloid, dentine, shell, ...
    site: Mapped[str | None] = mapped_column(String(200))  # where on the specimen
    tare_mg: Mapped[Decimal]
    gross_mg: Mapped[Decimal]
    readability_mg: Mapped[Decimal]
    mass_mg: Mapped[Decimal]
    mass_u_mg: Mapped[Decimal]
    drilled_at: Mapped[datetime]
    drilled_by: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"), index=True)
    material: Mapped[str | None] = mapped_column(String(120))  # preset or user material name
    override_reason: Mapped[str | None] = mapped_column(Text)
    status: Mapped[ContainerStatus] = mapped_column(
        enum_type(ContainerStatus), default=ContainerStatus.AVAILABLE
    )
    # What was left in the vial when it left the lab (returned/destroyed/retained), weighed.
    residual_mg: Mapped[Decimal | None]
    residual_u_mg: Mapped[Decimal | None]
    return_shipment_id: Mapped[int | None] = mapped_column(ForeignKey("shipment.id"), index=True)
    location_id: Mapped[int | None] = mapped_column(ForeignKey("location.id"), index=True)
    created_at: Mapped[datetime]

    specimen: Mapped[Specimen] = relationship(back_populates="powders")
    location: Mapped[Location | None] = relationship()
    solutions: Mapped[list[Solution]] = relationship(
        back_populates="powder", order_by="Solution.id"
    )


class Solution(HasPublicId, Base):
    """Powder dissolved in acid; the solution mass is weighed by difference too."""

    __tablename__ = "solution"
    __table_args__ = (
        checks.above_zero("powder_mass_mg"),
        checks.not_negative("powder_mass_u_mg"),
        checks.above_zero("solution_mass_g"),
        checks.not_negative("solution_mass_u_g"),
        checks.not_negative("residual_g"),
        checks.not_negative("residual_u_g"),
    )
    id_kind = Kind.SOLUTION

    id: Mapped[int] = mapped_column(primary_key=True)
    powder_id: Mapped[int] = mapped_column(ForeignKey("powder.id"), index=True)
    powder_mass_mg: Mapped[Decimal]  # powder taken into this solution
    powder_mass_u_mg: Mapped[Decimal]
    acid: Mapped[str] = mapped_column(String(120))  # e.g. "2 M HNO3"
    solution_mass_g: Mapped[Decimal]
    solution_mass_u_g: Mapped[Decimal]
    dissolved_at: Mapped[datetime]
    dissolved_by: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"), index=True)
    status: Mapped[ContainerStatus] = mapped_column(
        enum_type(ContainerStatus), default=ContainerStatus.AVAILABLE
    )
    residual_g: Mapped[Decimal | None]  # solution left when the vial left the lab, weighed
    residual_u_g: Mapped[Decimal | None]
    location_id: Mapped[int | None] = mapped_column(ForeignKey("location.id"), index=True)
    created_at: Mapped[datetime]

    powder: Mapped[Powder] = relationship(back_populates="solutions")
    location: Mapped[Location | None] = relationship()
    concentrations: Mapped[list[Concentration]] = relationship(
        back_populates="solution", order_by="Concentration.id"
    )
    aliquots: Mapped[list[Aliquot]] = relationship(back_populates="solution", order_by="Aliquot.id")


class Concentration(Base):
    """A measured element mass fraction of a solution (µg/g); later rows may supersede earlier."""

    __tablename__ = "concentration"
    __table_args__ = (checks.above_zero("value_ug_per_g"), checks.not_negative("u_ug_per_g"))

    id: Mapped[int] = mapped_column(primary_key=True)
    solution_id: Mapped[int] = mapped_column(ForeignKey("solution.id"), index=True)
    element: Mapped[str] = mapped_column(String(3))
    value_ug_per_g: Mapped[Decimal]
    u_ug_per_g: Mapped[Decimal]
    method: Mapped[str | None] = mapped_column(String(120))  # e.g. ICP-OES
    measured_at: Mapped[datetime]
    recorded_by: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"), index=True)
    supersedes_id: Mapped[int | None] = mapped_column(ForeignKey("concentration.id"), index=True)
    created_at: Mapped[datetime]

    solution: Mapped[Solution] = relationship(back_populates="concentrations")


class Aliquot(HasPublicId, Base):
    """A weighed part of a solution taken for one purpose (isotopes, concentration, archive)."""

    __tablename__ = "aliquot"
    __table_args__ = (checks.above_zero("mass_g"), checks.not_negative("mass_u_g"))
    id_kind = Kind.ALIQUOT

    id: Mapped[int] = mapped_column(primary_key=True)
    solution_id: Mapped[int] = mapped_column(ForeignKey("solution.id"), index=True)
    mass_g: Mapped[Decimal]
    mass_u_g: Mapped[Decimal]
    purpose: Mapped[AliquotPurpose] = mapped_column(enum_type(AliquotPurpose))
    taken_at: Mapped[datetime]
    taken_by: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"), index=True)
    status: Mapped[ContainerStatus] = mapped_column(
        enum_type(ContainerStatus), default=ContainerStatus.AVAILABLE
    )
    location_id: Mapped[int | None] = mapped_column(ForeignKey("location.id"), index=True)
    created_at: Mapped[datetime]

    solution: Mapped[Solution] = relationship(back_populates="aliquots")
    location: Mapped[Location | None] = relationship()
    positions: Mapped[list[BatchPosition]] = relationship(back_populates="aliquot")


class SpecimenPhoto(Base):
    """A photograph of a specimen at receipt or at return, kept as a document by SHA-256."""

    __tablename__ = "specimen_photo"
    __table_args__ = (UniqueConstraint("specimen_id", "document_id"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    specimen_id: Mapped[int] = mapped_column(ForeignKey("specimen.id"), index=True)
    document_id: Mapped[int] = mapped_column(ForeignKey("document.id"), index=True)
    stage: Mapped[str] = mapped_column(String(20))  # receipt, return or other
    caption: Mapped[str | None] = mapped_column(String(300))
    taken_at: Mapped[datetime]
    created_at: Mapped[datetime]

    document: Mapped[Document] = relationship()
