"""Quantities with units: parsed exactly, stored in one named base unit each.

Masses are stored in the unit named in the column (``_mg``, ``_g``, ``_ug``,
``_ng``); input always carries its unit ("2.15 mg", "0.00215 g") because a bare
number on a bench form is the commonest way to be wrong by a factor of 1000.
Parsing goes through ``Decimal`` so that the number of decimals a person typed is
kept — the balance's readability check needs it.
"""

from __future__ import annotations

import math
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


def split_quantity(text: str) -> tuple[Decimal, str]:
    """Split "2.15 mg" into (Decimal("2.15"), "mg"); the unit is normalised."""
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


def decimals_for(u: float, significant: int = 2, most: int = 6) -> int:
    """Decimal places showing an uncertainty with ``significant`` digits (GUM 7.2.6).

    Negative for large uncertainties (-2 rounds to hundreds). Decided after
    rounding, so 0.0996 becomes 0.10, not 0.100.
    """
    if u <= 0 or not math.isfinite(u):
        return 3
    places = significant - 1 - math.floor(math.log10(u))
    rounded = round(u, places)
    if rounded > 0:
        places = significant - 1 - math.floor(math.log10(rounded))
    return min(most, places)


def format_value_u(value: float | Decimal, u: float | Decimal | None, unit: str) -> str:
    """Value and uncertainty rounded to the uncertainty's last digit: 2.56100 ± 0.00041 mg
    (a stored exact value is rounded as a decimal, never through a float)."""
    if u is None:
        return f"{value:.3f} {unit}"
    u = float(u)
    places = decimals_for(u)
    shown = max(places, 0)
    return f"{round(value, places):.{shown}f} ± {round(u, places):.{shown}f} {unit}"


def format_mass_mg(mg: float | Decimal, u_mg: float | Decimal | None = None) -> str:
    """Format a mass given in mg, choosing µg or g when that reads better (a stored exact
    mass moves its decimal point, so no binary artefact is shown)."""
    size = abs(float(mg))
    if size != 0 and size < 0.1:
        unit, shift = "µg", 3
    elif size >= 10000:
        unit, shift = "g", -3
    else:
        unit, shift = "mg", 0
    value = mg.scaleb(shift) if isinstance(mg, Decimal) else mg * 10.0**shift
    return format_value_u(value, None if u_mg is None else float(u_mg) * 10.0**shift, unit)
