"""Numbers in text: how many digits each kind of quantity is shown with, written once.

Every front end (the CLI, the interface, the return report's CSV/XLSX/PDF text, refusals)
turns a quantity into words through one of the functions at the end of this module, so a
ratio reads the same wherever a person sees it. The rules, in order:

1. **An uncertainty decides the places.** It is shown to one or two significant digits
   (the GUM, JCGM 100:2008 §7.2.6: "at most two significant digits"; from memory): two
   when its leading digits are 100–354, one for 355–949, and 950–999 round up to 1000,
   shown with two (the Particle Data Group's rule; from memory), so 0.0041 mg is shown
   as 0.004, 0.000019 as 0.000019 and 0.0996 as 0.10. The value is rounded (or padded
   with zeros) to the same decimal place. Rounding is half away from zero (common
   practice).
2. **No uncertainty, no "±".** An absent, zero or negative uncertainty is not shown at all:
   never "± 0.000", which would claim a perfect measurement.
3. **Without an uncertainty, an exact decimal keeps its digits.** A mass typed as
   ``6.020 mg`` is stored exactly and shown as ``6.020 mg``: never shortened to 6.02, never
   padded. A computed value (a float) gets its kind's usual places: ratios 6 decimals
   (⁸⁷Sr/⁸⁶Sr, common practice), δ values 3 decimals (the ‰ scale's usual resolution,
   common practice; with a 2SD of ~0.1 ‰ rule 1 gives the 2 decimals labs report Ca δ
   with), masses 3 decimals in their unit, grams 4, µg 2, ng 1, percentages 1. A small
   non-zero value that would round to zero is shown to two significant digits instead.
4. **One notation.** ``value ± uncertainty unit (2SD, n=3)``: the unit after the
   uncertainty, which it shares; δ values carry their sign and ‰; a spread says what it is
   (``2SD``) where the quantity has one.

To add a kind of quantity, add a function here that calls :func:`value_u` with its unit and
its default places, and a case to ``tests/unit/test_precision.py``.
"""

from __future__ import annotations

import math
from decimal import ROUND_HALF_UP, Decimal

from tracker.domain.base import decimal_from_float

Number = float | int | Decimal

PLUS_MINUS = " ± "
ABSENT = "—"  # a value that does not exist yet (a result not measured, a limit not set)
# after a 2SD that is the lab's long-term one (larger than the result's own), and its key
LONG_TERM_MARK = " (lab)"
LONG_TERM_NOTE = (
    "(lab): the lab's long-term 2SD of its reference materials on that ratio and scale, "
    "reported because it is larger than the result's own spread (common practice)"
)
# An uncertainty whose three leading digits are below this keeps two significant digits,
# from it one (the Particle Data Group's rounding rule, Review of Particle Physics,
# "Introduction"; from memory).
TWO_DIGITS_BELOW = 355
SMALL_VALUE_DIGITS = 2  # a small value with no uncertainty, rather than a false zero

# Places of a value shown without an uncertainty, per kind (rule 3 above).
RATIO_PLACES = 6
DELTA_PLACES = 3
MASS_PLACES = 3
GRAM_PLACES = 4
MICROGRAM_PLACES = 2
NANOGRAM_PLACES = 1
PERCENT_PLACES = 1
CONCENTRATION_PLACES = 3


def exact(value: Number) -> Decimal | None:
    """The decimal a number stands for (a float by its shortest text), or None when it is
    not a finite number: there is nothing honest to show for it."""
    if isinstance(value, Decimal):
        return value if value.is_finite() else None
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return decimal_from_float(value) if isinstance(value, float) else Decimal(value)


def _step(places: int) -> Decimal:
    return Decimal(1).scaleb(-places)


def _at(value: Decimal, places: int) -> Decimal:
    return value.quantize(_step(places), rounding=ROUND_HALF_UP)


def uncertainty_places(u: Number | None) -> int | None:
    """Decimal places that show ``u`` with one or two significant digits (negative: tens,
    hundreds), or None when there is no uncertainty to show (absent, zero, negative, not
    finite). Two digits when its three leading digits are 100–354, else one; 950–999 round
    up to the next power of ten, shown with two (0.0996 → 0.10)."""
    if u is None:
        return None
    amount = exact(u)
    if amount is None or amount <= 0:
        return None
    leading = int(amount.scaleb(2 - amount.adjusted()))  # its three leading digits, 100–999
    return (1 if leading < TWO_DIGITS_BELOW else 0) - amount.adjusted()


def _digits(value: Decimal, *, signed: bool) -> str:
    """A decimal's digits in plain notation; a rounded negative zero loses its sign."""
    if value.is_zero():
        value = abs(value)
    return format(value, "+f" if signed else "f")


def number(value: Number, places: int, *, signed: bool = False) -> str:
    """A value at ``places`` decimals, no unit (table cells whose header names the unit)."""
    amount = exact(value)
    return ABSENT if amount is None else _digits(_at(amount, places), signed=signed)


def _plain(amount: Decimal, default_places: int, *, as_typed: bool, signed: bool) -> str:
    """Rule 3: an exact decimal as typed, a computed one at its kind's places (a small one
    at two significant digits rather than a false zero)."""
    if as_typed:
        return _digits(amount, signed=signed)
    places = default_places
    if not amount.is_zero() and amount.adjusted() < -places:
        places = SMALL_VALUE_DIGITS - 1 - amount.adjusted()
    return _digits(_at(amount, places), signed=signed)


def pair(
    value: Number | None,
    u: Number | None,
    *,
    default_places: int = MASS_PLACES,
    signed: bool = False,
) -> tuple[str, str | None]:
    """The value's digits and the uncertainty's, at one decimal place (None: no uncertainty
    to show), for tables that give each its own column."""
    amount = None if value is None else exact(value)
    if amount is None:
        return ABSENT, None
    places = uncertainty_places(u)
    spread = None if u is None or places is None else exact(u)
    if places is None or spread is None:
        as_typed = isinstance(value, Decimal)
        return _plain(amount, default_places, as_typed=as_typed, signed=signed), None
    return _digits(_at(amount, places), signed=signed), _digits(_at(spread, places), signed=False)


def value_u(
    value: Number | None,
    u: Number | None,
    unit: str = "",
    *,
    default_places: int = MASS_PLACES,
    signed: bool = False,
) -> str:
    """``value ± u unit`` by the rules above; ``unit`` may be empty (a ratio)."""
    shown, spread = pair(value, u, default_places=default_places, signed=signed)
    text = shown if spread is None else f"{shown}{PLUS_MINUS}{spread}"
    return f"{text} {unit}" if unit and shown != ABSENT else text


def spread_note(n: int | None, what: str = "2SD") -> str:
    """What a ± means, in brackets: ``(2SD, n=3)``; ``(n=1)`` when there is no spread."""
    parts = [what] if what else []
    if n is not None:
        parts.append(f"n={n}")
    return f" ({', '.join(parts)})" if parts else ""


# One function per kind of quantity --------------------------------------------------------


def ratio(value: Number | None, two_sd: Number | None = None) -> str:
    """An isotope ratio (⁸⁷Sr/⁸⁶Sr): 0.707880 ± 0.000019."""
    return value_u(value, two_sd, default_places=RATIO_PLACES)


def delta(value: Number | None, two_sd: Number | None = None) -> str:
    """A δ value in per mil, with its sign: +0.88 ± 0.15 ‰."""
    return value_u(value, two_sd, "‰", default_places=DELTA_PLACES, signed=True)


def result_pair(kind: str, value: Number | None, two_sd: Number | None) -> tuple[str, str | None]:
    """A result's value and 2SD as two cells (a δ signed, in ‰ by its column's header)."""
    if kind == "delta":
        return pair(value, two_sd, default_places=DELTA_PLACES, signed=True)
    return pair(value, two_sd, default_places=RATIO_PLACES)


def result(kind: str, value: Number | None, two_sd: Number | None, n: int | None) -> str:
    """A measured result with what its spread is: a δ or a ratio, 2SD and n."""
    shown = delta(value, two_sd) if kind == "delta" else ratio(value, two_sd)
    has_spread = uncertainty_places(two_sd) is not None
    return shown + spread_note(n, "2SD" if has_spread else "")


def mass_mg(mg: Number | None, u_mg: Number | None = None) -> str:
    """A mass held in mg, shown in µg below 0.1 mg and in g from 10 g, so it reads easily
    (an exact mass moves its decimal point: its typed digits stay)."""
    if mg is None:
        return ABSENT
    amount = exact(mg)
    if amount is None:
        return ABSENT
    size = abs(amount)
    unit, shift = (
        ("µg", 3) if 0 < size < Decimal("0.1") else ("g", -3) if size >= 10000 else ("mg", 0)
    )
    moved = amount.scaleb(shift) if isinstance(mg, Decimal) else float(amount.scaleb(shift))
    spread = None if u_mg is None else exact(u_mg)
    return value_u(moved, None if spread is None else spread.scaleb(shift), unit)


def milligrams(mg: Number | None, u_mg: Number | None = None) -> str:
    """A mass in mg whatever its size: in a report's column or totals, where a reader adds
    figures up and a change of unit would be misread."""
    return value_u(mg, u_mg, "mg")


def grams(g: Number | None, u_g: Number | None = None) -> str:
    """A solution's or an aliquot's mass in g."""
    return value_u(g, u_g, "g", default_places=GRAM_PLACES)


def micrograms(ug: Number | None, u_ug: Number | None = None) -> str:
    """An amount of an element in µg."""
    return value_u(ug, u_ug, "µg", default_places=MICROGRAM_PLACES)


def nanograms(ng: Number | None, u_ng: Number | None = None) -> str:
    """A procedural blank in ng."""
    return value_u(ng, u_ng, "ng", default_places=NANOGRAM_PLACES)


def concentration(ug_per_g: Number | None, u: Number | None = None) -> str:
    """A mass fraction in µg/g."""
    return value_u(ug_per_g, u, "µg/g", default_places=CONCENTRATION_PLACES)


def percent(fraction: Number | None, u: Number | None = None, places: int = PERCENT_PLACES) -> str:
    """A fraction (a yield, a share of a limit) as a percentage: 95.0 ± 2.0 %; ``places``
    for one without an uncertainty (a blank's share of a column: 0.19 %)."""
    amount = None if fraction is None else exact(fraction)
    if fraction is None or amount is None:
        return ABSENT
    spread = None if u is None else exact(u)
    computed = not isinstance(fraction, Decimal)  # a float stays a computed value (rule 3)
    shown = float(amount.scaleb(2)) if computed else amount.scaleb(2)
    return value_u(shown, None if spread is None else spread.scaleb(2), "%", default_places=places)


def as_given(value: Number | None) -> str:
    """A number someone set rather than measured (a limit, a threshold, a stratum's age):
    an exact decimal as typed, a float by its shortest text (its typed zeros are lost)."""
    amount = None if value is None else exact(value)
    if amount is None:
        return ABSENT
    return _digits(amount if isinstance(value, Decimal) else amount.normalize(), signed=False)


def limit_mg(mg: Number | None) -> str:
    """A limit in mg as the lender wrote it (no uncertainty: a limit is not measured);
    ``no limit`` when there is none."""
    return "no limit" if mg is None else f"{as_given(mg)} mg"


def used_of_limit(used_mg: Number, limit: Number | None) -> str:
    """Mass used against its limit, compactly: ``0.814/50 mg``, or ``0.814 mg`` unlimited."""
    used = number(used_mg, MASS_PLACES)
    return f"{used} mg" if not limit else f"{used}/{limit_mg(limit)}"


def reported_spread(spread: str | None, unit: str, basis: str) -> str:
    """A result's 2SD cell: the spread with its unit, marked when it is the lab's long-term
    2SD rather than the result's own; a dash when there is none."""
    if spread is None:
        return ABSENT
    return spread + unit + (LONG_TERM_MARK if basis == "long-term" else "")
