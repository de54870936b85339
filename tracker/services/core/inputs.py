"""Pydantic input models shared by the services, and the translation of their errors.

Every service takes a request model. Entry points hand over what a person typed
(strings with units, IDs in any case); the models turn it into exact values or
refuse it with an :class:`InputError` naming the field and the value.

Every piece of text a request carries — typed, scanned or read from a file — first
passes :func:`tracker.domain.text_rules.accept`: control, bidirectional and invisible
characters are refused with the field named and the character shown (``<U+202E>``),
and the text is kept in Unicode NFC. Fields of free text (:data:`Text`) may keep line
breaks and tabs; every other field is one line.
"""

from __future__ import annotations

import typing
from collections.abc import Iterable, Mapping
from datetime import date, datetime
from decimal import Decimal
from typing import Annotated, Any, ClassVar, TypeVar

from pydantic import (
    AfterValidator,
    BaseModel,
    BeforeValidator,
    ConfigDict,
    Field,
    ValidationError,
    model_validator,
)
from pydantic.fields import FieldInfo

from tracker.domain.elements import is_element
from tracker.domain.errors import InputError
from tracker.domain.text_rules import TextProblem, accept
from tracker.domain.units import UnitError, mass_fraction_to_ug_per_g, mass_to_mg


class FreeTextMark:
    """Marks a field of free text (notes, reasons): its text may keep line breaks and tabs."""


FREE_TEXT = FreeTextMark()


class Request(BaseModel):
    """Base of every service input: no unknown fields, whitespace trimmed, immutable.

    Before any field is validated, every text in the input (dictionary keys and values and
    list items included) is judged by the domain's text rule, so no entry point — a CLI
    option, an interface form, a file's row — can hand a service a control character.
    """

    model_config = ConfigDict(extra="forbid", str_strip_whitespace=True, frozen=True)

    # Filled in for each subclass: fields (and aliases) of free text; fields holding other
    # requests, which judge their own text; fields whose dictionaries or lists hold text.
    free_text_fields: ClassVar[frozenset[str]] = frozenset()
    nested_fields: ClassVar[frozenset[str]] = frozenset()
    text_containers: ClassVar[frozenset[str]] = frozenset()

    @classmethod
    def __pydantic_init_subclass__(cls, **kwargs: Any) -> None:
        super().__pydantic_init_subclass__(**kwargs)
        cls.free_text_fields = _keys(cls.model_fields, _is_free_text)
        cls.nested_fields = _keys(cls.model_fields, _holds_model)
        cls.text_containers = _keys(cls.model_fields, _holds_container) - cls.nested_fields

    @model_validator(mode="before")
    @classmethod
    def _outside_text(cls, data: Any) -> Any:
        if not isinstance(data, Mapping):
            return data
        if _plain_ascii([value for value in data.values() if type(value) is str]):
            looked_at = [key for key in cls.text_containers if key in data]  # the usual case
        else:
            looked_at = [key for key in data if key not in cls.nested_fields]
        judged: dict[Any, Any] | None = None  # a copy, made only when some text changes
        for key in looked_at:
            value = data[key]
            kept = _judged(str(key), value, key in cls.free_text_fields)
            if kept is not value:
                judged = dict(data) if judged is None else judged
                judged[key] = kept
        return data if judged is None else judged


R = TypeVar("R", bound=BaseModel)


class FieldProblem(ValueError):
    """Raised by a model-level validator to blame one field (and its value) by name."""

    def __init__(self, field: str, value: object, reason: str) -> None:
        super().__init__(reason)
        self.field, self.value, self.reason = field, value, reason


class TextRefused(FieldProblem):
    """A field's text holds a character the text rule refuses; ``value`` shows it visibly."""


# Values that hold no text, passed over without a look (anything else is looked into).
_NOT_TEXT = frozenset({type(None), bool, int, float, Decimal, bytes, date, datetime})


def _judged(field: str, value: Any, multiline: bool) -> Any:
    """``value`` with every text in it accepted (trimmed, NFC), or TextRefused for the field.

    Dictionary keys are one line; values and list items are judged like the field. What
    needs no change is returned as it came (the same object), so callers copy only on change.
    """
    kind = type(value)
    if kind in _NOT_TEXT:
        return value
    if kind is str:
        try:
            kept = accept(value, multiline=multiline)
        except TextProblem as problem:
            raise TextRefused(field.replace("_", "-"), problem.shown, problem.reason) from None
        return value if kept == value else kept
    if kind is dict or isinstance(value, Mapping):
        if _plain_ascii([*value, *value.values()]):
            return value
        pairs = [
            (_judged(field, key, False), _judged(f"{field}.{key}", item, multiline))
            for key, item in value.items()
        ]
        same = all(
            k is key and v is item for (k, v), (key, item) in zip(pairs, value.items(), strict=True)
        )
        if same:
            return value
        kept_pairs = dict(pairs)
        if len(kept_pairs) < len(pairs):  # two names that differ only in how they are composed
            twice = next(k for n, (k, _) in enumerate(pairs) if k in dict(pairs[:n]))
            raise TextRefused(
                field.replace("_", "-"), twice, "is written twice (composed two ways, NFC)"
            )
        return kept_pairs
    if isinstance(value, list | tuple):
        if _plain_ascii(value):
            return value
        items = [_judged(field, item, multiline) for item in value]
        return value if all(a is b for a, b in zip(items, value, strict=True)) else items
    return value


def _plain_ascii(items: Iterable[Any]) -> bool:
    """Whether every item is text in printable ASCII without blanks at its ends, which the
    text rule leaves exactly as it is: checked at C speed over all items joined. (A "~"
    beside a space inside an item only sends it the slow way, to ``accept``.)"""
    try:
        joined = "~".join(items)
    except TypeError:  # not all of them are text
        return False
    at_an_end = joined.startswith(" ") or joined.endswith(" ") or " ~" in joined or "~ " in joined
    return joined.isascii() and joined.isprintable() and not at_an_end


def imported_text(where: str, value: str, *, multiline: bool = False) -> str:
    """A cell of an imported file kept as text, judged like a request's: ``where`` names
    the file's row and column (see :func:`tracker.domain.errors.at_cell`)."""
    try:
        return accept(value, multiline=multiline)
    except TextProblem as problem:
        raise InputError(where, problem.shown, problem.reason) from None


def _keys(
    fields: dict[str, FieldInfo], wanted: typing.Callable[[FieldInfo], bool]
) -> frozenset[str]:
    """The names and aliases of the fields ``wanted`` picks."""
    return frozenset(
        key for name, info in fields.items() if wanted(info) for key in (name, info.alias) if key
    )


def _is_free_text(info: FieldInfo) -> bool:
    return FREE_TEXT in info.metadata or _mentions(info.annotation, lambda t: t is FREE_TEXT)


def _holds_model(info: FieldInfo) -> bool:
    return _mentions(info.annotation, lambda t: isinstance(t, type) and issubclass(t, BaseModel))


def _holds_container(info: FieldInfo) -> bool:
    return _mentions(
        info.annotation,
        lambda t: t is Any or typing.get_origin(t) in _CONTAINERS or t in _CONTAINERS,
    )


_CONTAINERS = (dict, list, tuple, set, frozenset, Mapping)


def _mentions(annotation: Any, found: typing.Callable[[Any], bool]) -> bool:
    """Whether ``annotation`` or anything inside it (unions, Annotated extras, item types)
    is what ``found`` looks for."""
    if found(annotation):
        return True
    inner = [*typing.get_args(annotation), *getattr(annotation, "__metadata__", ())]
    return any(_mentions(part, found) for part in inner)


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
            raise InputError(_blamed_field(blamed, first["loc"]), value, blamed.reason) from None
        field = ".".join(str(part) for part in first["loc"]) or model.__name__
        given: Any = first.get("input")
        if isinstance(given, bytes):  # a file's content: name the file, never show its bytes
            field, given = _file_field(field), _file_name(data, first["loc"])
        if isinstance(given, dict):
            given = None
        raise InputError(field.replace("_", "-"), given, plain_reason(first)) from None


def plain_reason(error: Mapping[str, Any]) -> str:
    """Why pydantic refused a value, worded for a person (its own wording as a last resort)."""
    kind, limits = error["type"], error.get("ctx", {})
    if kind in _LIMIT_REASONS:
        return _LIMIT_REASONS[kind].format(**limits)
    return _PLAIN_REASONS.get(kind, str(error["msg"]).removeprefix("Value error, "))


def _file_name(data: object, loc: tuple[int | str, ...]) -> str | None:
    """The name of the file whose content is at ``loc`` (the ``filename`` beside it)."""
    holder = data
    for part in loc[:-1]:
        holder = holder.get(part) if isinstance(holder, Mapping) else None
    named = holder.get("filename") if isinstance(holder, Mapping) else None
    return named if isinstance(named, str) else None


def _file_field(field: str) -> str:
    """A file's content is named as the file (``content`` -> ``file``, ``document.content``
    -> ``document``): the person chose a file, not a field called content."""
    parent, _, last = field.rpartition(".")
    return (parent or "file") if last == "content" else field


def _blamed_field(blamed: FieldProblem, loc: tuple[int | str, ...]) -> str:
    """The field a problem blames; text inside a nested request is named by its path
    (``terms.permitted-tissues``, ``definition.columns.sample-name``)."""
    if not isinstance(blamed, TextRefused):
        return blamed.field
    return ".".join([*(str(part).replace("_", "-") for part in loc), blamed.field])


# Pydantic's refusals of a value beyond a limit, with the limit (its ``ctx``) in the words.
_LIMIT_REASONS = {
    "string_too_long": "is longer than {max_length} characters",
    "string_too_short": "is shorter than {min_length} character(s)",
    "bytes_too_long": "is larger than {max_length:,} bytes: refused",
    "less_than_equal": "is above {le:g}, the most it may be",
    "less_than": "must be below {lt:g}",
    "greater_than_equal": "is below {ge:g}, the least it may be",
    "greater_than": "must be above {gt:g}",
    "too_long": "has more than {max_length} entries",
}
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
    "bytes_too_short": "is empty: there is nothing in it to read",
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
Text = Annotated[str, Field(max_length=4000), FREE_TEXT]  # free text: may keep line breaks
AwareDatetime = Annotated[datetime, AfterValidator(_aware)]
Day = date
