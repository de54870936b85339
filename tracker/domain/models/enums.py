"""Closed vocabularies of the domain (in :mod:`tracker.domain.vocab`), and how they are stored."""

from __future__ import annotations

from enum import StrEnum
from typing import Any

from sqlalchemy import Enum

from tracker.domain.vocab import (
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

__all__ = [
    "AliquotPurpose",
    "ContainerStatus",
    "Disposition",
    "LabelJobKind",
    "LabelStatus",
    "LoanStatus",
    "LocationKind",
    "MeasurementRole",
    "PositionKind",
    "Role",
    "ShipmentDirection",
    "SpecimenStatus",
    "TermsKind",
    "enum_type",
]


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
