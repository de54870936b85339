"""Declarative base, naming convention and the UTC timestamp type shared by all models."""

from __future__ import annotations

from datetime import UTC, datetime
from decimal import Decimal, InvalidOperation
from typing import Any, ClassVar

from sqlalchemy import (
    JSON,
    ColumnElement,
    DateTime,
    Dialect,
    Float,
    MetaData,
    Numeric,
    String,
    cast,
)
from sqlalchemy.orm import DeclarativeBase, QueryableAttribute
from sqlalchemy.types import TypeDecorator, TypeEngine

from tracker.domain.ids import Kind, format_id

# Stable constraint names so that Alembic migrations are identical on SQLite and PostgreSQL.
NAMING_CONVENTION = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_N_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}


class UTCDateTime(TypeDecorator[datetime]):
    """Timezone-aware UTC timestamps on every backend.

    SQLite has no time zones, so values are written as UTC and given back their
    zone on the way out; naive datetimes are refused rather than guessed.
    """

    impl = DateTime(timezone=True)
    cache_ok = True

    def process_bind_param(self, value: datetime | None, dialect: Dialect) -> datetime | None:
        if value is None:
            return None
        if value.tzinfo is None or value.utcoffset() is None:
            raise ValueError(f"naive datetime {value!r}: timestamps must carry a time zone")
        value = value.astimezone(UTC)
        return value.replace(tzinfo=None) if dialect.name == "sqlite" else value

    def process_result_value(self, value: datetime | None, dialect: Dialect) -> datetime | None:
        if value is None:
            return None
        if value.tzinfo is None:
            return value.replace(tzinfo=UTC)
        return value.astimezone(UTC)


def decimal_text(value: Decimal) -> str:
    """A decimal's digits as typed, never in exponent form: ``6.020``, ``0.0000001``.

    The one text of an exact value: what SQLite stores, what the facts state and what
    every printer shows. (``str`` would write ``1E-7``.)"""
    return format(value, "f")


def decimal_from_float(value: float) -> Decimal:
    """The decimal a float stands for: its shortest round-trip text (``repr``), so
    ``6.02`` stays ``6.02`` and never becomes ``6.0199999999999995736744...``. Used where
    a computation (an uncertainty by propagation) ends, and for floats stored before
    values were kept exactly."""
    return Decimal(repr(float(value)))


def as_decimal(value: Decimal | str | float | int) -> Decimal:
    """A stored exact value as a Decimal, whatever the driver gave: NUMERIC on
    PostgreSQL, text on SQLite (a float or whole number only from outside writers)."""
    if isinstance(value, Decimal):
        return value
    if isinstance(value, float):
        return decimal_from_float(value)
    try:
        return Decimal(value)
    except InvalidOperation:
        raise ValueError(f"{value!r} is not a decimal number") from None


class Exact(TypeDecorator[Decimal]):
    """A measured value kept exactly as typed (``6.020`` mg stays ``6.020``).

    PostgreSQL stores NUMERIC. SQLite has no exact decimal type: its NUMERIC affinity turns
    ``6.020`` into the binary float 6.02 (15 significant digits at most), so the value is
    stored as its digits (``decimal_text``) in a text column. Only Decimals are written:
    a float here would already carry a binary artefact.
    """

    impl = Numeric(asdecimal=True)
    cache_ok = True

    def load_dialect_impl(self, dialect: Dialect) -> TypeEngine[Any]:
        if dialect.name == "sqlite":
            return dialect.type_descriptor(String())
        return dialect.type_descriptor(Numeric(asdecimal=True))

    def process_bind_param(self, value: Decimal | None, dialect: Dialect) -> Any:
        if value is None:
            return None
        if not isinstance(value, Decimal) or not value.is_finite():
            raise TypeError(f"{value!r}: an exact measured value must be a finite Decimal")
        return decimal_text(value) if dialect.name == "sqlite" else value

    def process_result_value(self, value: Any, dialect: Dialect) -> Decimal | None:
        return None if value is None else as_decimal(value)


def computed(column: ColumnElement[Any] | QueryableAttribute[Any]) -> ColumnElement[Any]:
    """An exact column as a float, for a computation in SQL (sums, closure tests).

    Computations propagating uncertainties work in floats, as in Python; and on SQLite a
    comparison with the text an exact column holds would compare text, so every SQL
    computation reads an exact column through this one cast."""
    return cast(column, Float)


class Base(DeclarativeBase):
    metadata = MetaData(naming_convention=NAMING_CONVENTION)
    type_annotation_map: ClassVar[dict[Any, Any]] = {
        datetime: UTCDateTime(),
        Decimal: Exact(),
        dict[str, Any]: JSON(),
        list[str]: JSON(),
        list[Any]: JSON(),
    }


class HasPublicId:
    """Mixin for rows that have a public, labelled ID derived from their primary key."""

    id_kind: ClassVar[Kind]
    id: int

    @property
    def public_id(self) -> str:
        return format_id(self.id_kind, self.id)
