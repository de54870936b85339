"""Quantities with units: parsed exactly, stored in one named base unit each.

Masses are stored in the unit named in the column (``_mg``, ``_g``, ``_ug``,
``_ng``); input always carries its unit ("2.15 mg", "0.00215 g") because a bare
number on a bench form is the commonest way to be wrong by a factor of 1000.
Parsing goes through ``Decimal`` so that the number of decimals a person typed is
kept — the balance's readability check needs it.
"""

from __future__ import annotations

import re
from decimal import Decimal, InvalidOperation, localcontext

# Factors to one milligram. "u", "µ" (micro sign) and "μ" (Greek mu) all mean micro.
_MASS_TO_MG: dict[str, Decimal] = {
    "ng": Decimal("1e-6"),
    "ug": Decimal("1e-3"),
    "mg": Decimal(1),
    "g": Decimal(1000),
    "kg": Decimal(1000000),
}

# Mass fractions (concentrations in a solution by mass), as factors to µg/g.
_FRACTION_TO_UG_PER_G: dict[str, Decimal] = {
    "ng/g": Decimal("1e-3"),
    "ppb": Decimal("1e-3"),
    "ug/g": Decimal(1),
    "ppm": Decimal(1),
    "mg/kg": Decimal(1),
    "mg/g": Decimal(1000),
    "g/kg": Decimal(1000),
    "%": Decimal(10000),
    "wt%": Decimal(10000),
}

_VOLUME_BASED = {"mg/l", "ug/l", "ng/l", "ug/ml", "mg/ml", "ng/ml", "g/l", "ppmv"}

_QUANTITY = re.compile(
    r"^\s*(?P<num>[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*(?P<unit>[^\d\s].*?)?\s*$"
)


class UnitError(ValueError):
    """A quantity that cannot be read: the message says what was expected."""


def _normalise_unit(unit: str) -> str:
    return unit.strip().replace("µ", "u").replace("μ", "u").replace(" ", "").lower()


_COMMA_IN_NUMBER = re.compile(r"\d,\d")


def _refuse_commas(text: str) -> None:
    """A comma inside a number is refused, never guessed: "1,236 mg" is 1.236 mg with a
    decimal comma and 1236 mg with a thousands separator."""
    if not _COMMA_IN_NUMBER.search(text):
        return
    if text.count(",") == 1 and "." not in text:
        raise UnitError(
            f"has a comma in its number; tracker reads a decimal point only: if you meant a "
            f"decimal comma, write {text.strip().replace(',', '.')!r}"
        )
    raise UnitError(
        "has a comma among its digits; write the number with one decimal point and no "
        "thousands separators, e.g. '1236.717 mg'"
    )


def split_quantity(text: str) -> tuple[Decimal, str]:
    """Split "2.15 mg" into (Decimal("2.15"), "mg"); the unit is normalised."""
    _refuse_commas(text)
    match = _QUANTITY.match(text)
    if not match:
        raise UnitError("is not a number followed by a unit, e.g. '2.15 mg'")
    try:
        number = Decimal(match["num"])
    except InvalidOperation as exc:  # pragma: no cover - the regex admits only valid numbers
        raise UnitError("is not a number") from exc
    unit = match["unit"]
    if not unit:
        raise UnitError("has no unit; write it with one, e.g. '2.15 mg'")
    return number, _normalise_unit(unit)


def mass_to_mg(text: str) -> Decimal:
    """Parse a mass with its unit and return it in milligrams, exactly."""
    number, unit = split_quantity(text)
    try:
        factor = _MASS_TO_MG[unit]
    except KeyError:
        raise UnitError(f"unknown mass unit {unit!r}; use ng, ug, mg, g or kg") from None
    return number * factor


def mass_fraction_to_ug_per_g(text: str) -> Decimal:
    """Parse a concentration given as a mass fraction and return it in µg/g."""
    number, unit = split_quantity(text)
    if unit in _VOLUME_BASED:
        raise UnitError(
            f"{unit!r} is per volume; weigh the solution and give a mass fraction such as ug/g"
        )
    try:
        factor = _FRACTION_TO_UG_PER_G[unit]
    except KeyError:
        known = ", ".join(sorted(_FRACTION_TO_UG_PER_G))
        raise UnitError(f"unknown concentration unit {unit!r}; use one of {known}") from None
    return number * factor


def decimals_below(value: Decimal, step: Decimal) -> bool:
    """True when ``value`` is not a whole multiple of ``step`` (finer than the balance reads)."""
    if step <= 0:
        raise UnitError("readability must be positive")
    with localcontext() as context:
        context.prec = 80  # exact for any value a person can type (the remainder is exact)
        return value % step != 0
