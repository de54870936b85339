"""Pydantic input models shared by the services, and the translation of their errors.

Every service takes a request model. Entry points hand over what a person typed
(strings with units, IDs in any case); the models turn it into exact values or
refuse it with an :class:`InputError` naming the field and the value.
"""

from __future__ import annotations

from collections.abc import Mapping
from datetime import date, datetime
from decimal import Decimal
from typing import Annotated, Any, TypeVar

from pydantic import (
    AfterValidator,
    BaseModel,
    BeforeValidator,
    ConfigDict,
    Field,
    ValidationError,
)

from tracker.domain.elements import is_element
from tracker.domain.errors import InputError
from tracker.domain.units import UnitError, mass_fraction_to_ug_per_g, mass_to_mg


class Request(BaseModel):
    """Base of every service input: no unknown fields, whitespace trimmed, immutable."""

    model_config = ConfigDict(extra="forbid", str_strip_whitespace=True, frozen=True)


R = TypeVar("R", bound=BaseModel)


class FieldProblem(ValueError):
    """Raised by a model-level validator to blame one field (and its value) by name."""

    def __init__(self, field: str, value: object, reason: str) -> None:
        super().__init__(reason)
        self.field, self.value, self.reason = field, value, reason


Raw = Mapping[str, Any]  # what an entry point hands over: field name -> typed text or value


def parse(model: type[R], data: R | Raw) -> R:
    """Validate ``data`` into ``model``; the first problem becomes a one-line InputError."""
    if isinstance(data, model):
        return data
    try:
        return model.model_validate(data)
    except ValidationError as exc:
        first = exc.errors(include_url=False)[0]
        blamed = first.get("ctx", {}).get("error")
        if isinstance(blamed, FieldProblem):
            value = None if blamed.value is None else str(blamed.value)
            raise InputError(blamed.field, value, blamed.reason) from None
        field = ".".join(str(part) for part in first["loc"]) or model.__name__
        value = first.get("input")
        if isinstance(value, dict):
            value = None
        reason = _PLAIN_REASONS.get(first["type"], first["msg"].removeprefix("Value error, "))
        raise InputError(field.replace("_", "-"), value, reason) from None


# Pydantic's wording for the commonest slips, said the way a bench form would say it.
_PLAIN_REASONS = {
    "datetime_parsing": "is not a date and time; write ISO 8601 with a zone: 2026-03-04T09:15Z",
    "datetime_from_date_parsing": "is not a date and time; write e.g. 2026-03-04T09:15Z",
    "datetime_type": "is not a date and time; write e.g. 2026-03-04T09:15Z",
    "date_parsing": "is not a date; write YYYY-MM-DD",
    "date_from_datetime_parsing": "is not a date; write YYYY-MM-DD",
    "float_parsing": "is not a number",
    "int_parsing": "is not a whole number",
    "decimal_parsing": "is not a number",
    "missing": "is required",
    "extra_forbidden": "is not a field this action takes",
}


def _require_text(value: Any) -> str:
    if isinstance(value, bool) or not isinstance(value, str):
        if isinstance(value, int | float | Decimal):
            raise ValueError("needs a unit, e.g. '2.15 mg'")
        raise ValueError("must be text such as '2.15 mg'")
    return value


def _mass_mg(value: Any) -> Decimal:
    if isinstance(value, Decimal):
        return value
    try:
        return mass_to_mg(_require_text(value))
    except UnitError as exc:
        raise ValueError(str(exc)) from None


def _fraction(value: Any) -> Decimal:
    try:
        return mass_fraction_to_ug_per_g(_require_text(value))
    except UnitError as exc:
        raise ValueError(str(exc)) from None


def _positive(value: Decimal) -> Decimal:
    if value <= 0:
        raise ValueError("must be greater than zero")
    return value


def _not_negative(value: Decimal) -> Decimal:
    if value < 0:
        raise ValueError("must not be negative")
    return value


def _element(value: str) -> str:
    if not is_element(value):
        raise ValueError("is not an element symbol (write it as Ca, Sr, Mg ...)")
    return value


def _aware(value: datetime) -> datetime:
    if value.tzinfo is None:
        raise ValueError("needs a time zone, e.g. 2026-03-04T09:15:00Z")
    return value


# A mass typed with its unit, held exactly in milligrams.
MassMg = Annotated[Decimal, BeforeValidator(_mass_mg)]
PositiveMassMg = Annotated[Decimal, BeforeValidator(_mass_mg), AfterValidator(_positive)]
NonNegativeMassMg = Annotated[Decimal, BeforeValidator(_mass_mg), AfterValidator(_not_negative)]
# A mass fraction typed with its unit (ug/g, ppm, ng/g, wt% ...), held in µg/g.
FractionUgPerG = Annotated[Decimal, BeforeValidator(_fraction), AfterValidator(_not_negative)]
Element = Annotated[str, AfterValidator(_element)]
Name = Annotated[str, Field(min_length=1, max_length=200, pattern=r"^[^\n\r\t]*$")]
ShortCode = Annotated[str, Field(min_length=1, max_length=32, pattern=r"^[A-Za-z0-9._-]+$")]
Text = Annotated[str, Field(max_length=4000)]
AwareDatetime = Annotated[datetime, AfterValidator(_aware)]
Day = date
