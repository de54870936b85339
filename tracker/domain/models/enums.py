"""Closed vocabularies of the domain, stored as their string values."""

from __future__ import annotations

from enum import StrEnum
from typing import Any

from sqlalchemy import Enum


class Role(StrEnum):
    TECHNICIAN = "technician"
    MANAGER = "manager"


class LocationKind(StrEnum):
    BUILDING = "building"
    ROOM = "room"
    CABINET = "cabinet"
    FREEZER = "freezer"
    SHELF = "shelf"
    BOX = "box"
    POSITION = "position"


class LoanStatus(StrEnum):
    OPEN = "open"
    RETURNED = "returned"  # the material has gone back; obligations (reports) may remain
    CLOSED = "closed"


class SpecimenStatus(StrEnum):
    EXPECTED = "expected"  # on the lender's manifest, not yet received
    ON_HAND = "on_hand"
    RETURNED = "returned"


class ContainerStatus(StrEnum):
    """State of a vial of derived material (powder, solution, aliquot, cut)."""

    AVAILABLE = "available"
    CONSUMED = "consumed"
    RETURNED = "returned"
    RETAINED = "retained"  # kept after the loan's return, with the lender's permission
    DESTROYED = "destroyed"


class Disposition(StrEnum):
    """What a loan requires for leftover powder or solutions."""

    RETURN = "return"
    DESTROY = "destroy"
    RETAIN = "retain"


class TermsKind(StrEnum):
    ORIGINAL = "original"
    EXTENSION = "extension"
    ALLOWANCE = "allowance"
    SPECIMENS = "specimens"
    OTHER = "other"


class AliquotPurpose(StrEnum):
    ISOTOPES = "isotopes"
    CONCENTRATION = "concentration"
    ARCHIVE = "archive"
    OTHER = "other"


class PositionKind(StrEnum):
    SAMPLE = "sample"
    BLANK = "blank"
    REFERENCE = "reference"


class MeasurementRole(StrEnum):
    STANDARD = "standard"
    SAMPLE = "sample"
    REFERENCE = "reference"
    BLANK = "blank"
    UNMATCHED = "unmatched"


class ShipmentDirection(StrEnum):
    INCOMING = "incoming"
    OUTGOING = "outgoing"


class LabelStatus(StrEnum):
    """Where a label is in the print queue."""

    QUEUED = "queued"
    PRINTED = "printed"
    CANCELLED = "cancelled"


class LabelJobKind(StrEnum):
    PRINT = "print"  # the queue, printed
    REPRINT = "reprint"  # named items printed again, with a reason


def enum_type(enum: type[StrEnum]) -> Enum:
    """Store a StrEnum by value in a VARCHAR, the same on SQLite and PostgreSQL."""
    length = max(len(member.value) for member in enum)
    options: dict[str, Any] = {
        "native_enum": False,
        "create_constraint": False,
        "length": max(length, 16),
        "values_callable": lambda members: [m.value for m in members],
        "validate_strings": True,
    }
    return Enum(enum, **options)
