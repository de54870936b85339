"""All mapped classes; importing this module registers every table on ``Base.metadata``."""

from tracker.domain.models.chemistry import BatchPosition, ColumnBatch, Cut, ReferenceMaterial
from tracker.domain.models.corrections import Correction
from tracker.domain.models.enums import (
    AliquotPurpose,
    ContainerStatus,
    Disposition,
    LabelJobKind,
    LabelStatus,
    LoanStatus,
    LocationKind,
    MeasurementRole,
    PositionKind,
    Role,
    ShipmentDirection,
    SpecimenStatus,
    TermsKind,
)
from tracker.domain.models.instrument import (
    InstrumentSession,
    MappingProfile,
    Measurement,
    ReferenceValue,
    Result,
    SrCurve,
)
from tracker.domain.models.labels import Label, LabelJob
from tracker.domain.models.ledger import BackdatedEntry, CustodyEvent, EventRef
from tracker.domain.models.loans import (
    Document,
    Loan,
    LoanDocument,
    LoanTerms,
    Shipment,
    UserMaterial,
)
from tracker.domain.models.material import (
    Aliquot,
    Concentration,
    Powder,
    Solution,
    Specimen,
    SpecimenPhoto,
)
from tracker.domain.models.people import Lender, Location, Operator
from tracker.domain.models.settings import LabSetting

__all__ = [
    "Aliquot",
    "AliquotPurpose",
    "BackdatedEntry",
    "BatchPosition",
    "ColumnBatch",
    "Concentration",
    "ContainerStatus",
    "Correction",
    "CustodyEvent",
    "Cut",
    "Disposition",
    "Document",
    "EventRef",
    "InstrumentSession",
    "LabSetting",
    "Label",
    "LabelJob",
    "LabelJobKind",
    "LabelStatus",
    "Lender",
    "Loan",
    "LoanDocument",
    "LoanStatus",
    "LoanTerms",
    "Location",
    "LocationKind",
    "MappingProfile",
    "Measurement",
    "MeasurementRole",
    "Operator",
    "PositionKind",
    "Powder",
    "ReferenceMaterial",
    "ReferenceValue",
    "Result",
    "Role",
    "Shipment",
    "ShipmentDirection",
    "Solution",
    "Specimen",
    "SpecimenPhoto",
    "SpecimenStatus",
    "SrCurve",
    "TermsKind",
    "UserMaterial",
]
