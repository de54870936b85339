"""Quantities with units: exact parsing and refusals (their text: test_precision.py)."""

from __future__ import annotations

from decimal import Decimal

import pytest
from hypothesis import given
from hypothesis import strategies as st

from tracker.domain.units import (
    UnitError,
    decimals_below,
    mass_fraction_to_ug_per_g,
    mass_to_mg,
)

MICRO_SIGN = "\u00b5"  # µ MICRO SIGN
GREEK_MU = "\u03bc"  # μ GREEK SMALL LETTER MU


@pytest.mark.parametrize(
    "text",
    [
        "2.15 mg",
        "0.00215 g",
        "2150 ug",
        f"2150 {MICRO_SIGN}g",
        f"2150 {GREEK_MU}g",
        "2150000 ng",
        "0.00000215 kg",
        "2.15mg",
        " 2.15 MG ",
        "2.15e0 mg",
        "215E-2 mg",
        "2.15E-3 g",
        "2.15e3 ug",
    ],
)
def test_mass_to_mg_is_exact(text: str) -> None:
    # SI prefixes (SI Brochure, from memory): 1 g = 1000 mg, 1 mg = 1000 µg = 10^6 ng
    result = mass_to_mg(text)
    assert isinstance(result, Decimal)
    assert result == Decimal("2.15")


@given(st.decimals(min_value=-(10**9), max_value=10**9, places=7, allow_nan=False))
def test_mass_scaling_is_exact(value: Decimal) -> None:
    # SI prefixes (from memory); Decimal.scaleb shifts the exponent exactly
    assert mass_to_mg(f"{value} mg") == value
    assert mass_to_mg(f"{value} g") == value.scaleb(3)
    assert mass_to_mg(f"{value} ug") == value.scaleb(-3)
    assert mass_to_mg(f"{value} ng") == value.scaleb(-6)


@pytest.mark.parametrize("text", ["2.15 lb", "2.15 oz", "2.15 mL", "2.15 mg/L", "2.15 mgx"])
def test_unknown_mass_unit(text: str) -> None:
    with pytest.raises(UnitError, match="unknown mass unit"):
        mass_to_mg(text)


@pytest.mark.parametrize(
    ("text", "meant"),
    [("1236,717 mg", "'1236.717 mg'"), ("2,15mg", "'2.15mg'"), (" 0,5 g ", "'0.5 g'")],
)
def test_a_decimal_comma_is_refused_with_the_point_form(text: str, meant: str) -> None:
    # Refused rather than guessed: "1,236 mg" reads two ways (decimal comma or thousands)
    with pytest.raises(UnitError, match="comma") as caught:
        mass_to_mg(text)
    assert str(caught.value).endswith(meant) and "unit" not in str(caught.value)
    with pytest.raises(UnitError, match="comma"):
        mass_fraction_to_ug_per_g(text.replace("mg", "ug/g").replace(" g", " ug/g"))


@pytest.mark.parametrize("text", ["1,236.7 mg", "1,236,717 ug", "1.236,7 mg"])
def test_separators_in_a_number_are_refused(text: str) -> None:
    with pytest.raises(UnitError, match="no thousands separators"):
        mass_to_mg(text)


@pytest.mark.parametrize("text", ["2.15", "  2.15  ", "1e3"])
def test_missing_unit(text: str) -> None:
    with pytest.raises(UnitError, match="no unit"):
        mass_to_mg(text)


@pytest.mark.parametrize("text", ["", "   ", "mg", "two mg", "nan mg", "inf mg", "--2 mg"])
def test_not_a_quantity(text: str) -> None:
    with pytest.raises(UnitError, match="not a number"):
        mass_to_mg(text)


def test_unit_error_is_value_error() -> None:
    assert issubclass(UnitError, ValueError)


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        # 1 ppm (by mass) = 1 µg/g = 1 mg/kg; 1 ppb = 1 ng/g; 1 wt% = 10 mg/g (common practice)
        ("5 ppm", Decimal(5)),
        ("5 ug/g", Decimal(5)),
        (f"5 {MICRO_SIGN}g/g", Decimal(5)),
        (f"5 {GREEK_MU}g/g", Decimal(5)),
        ("5 mg/kg", Decimal(5)),
        ("5 MG / KG", Decimal(5)),
        ("250 ng/g", Decimal("0.25")),
        ("250 ppb", Decimal("0.25")),
        ("37 wt%", Decimal(370000)),
        ("37 %", Decimal(370000)),
        ("0.4 mg/g", Decimal(400)),
        ("0.4 g/kg", Decimal(400)),
    ],
)
def test_mass_fraction(text: str, expected: Decimal) -> None:
    result = mass_fraction_to_ug_per_g(text)
    assert isinstance(result, Decimal)
    assert result == expected


@pytest.mark.parametrize(
    "text", ["5 mg/L", "5 mg/l", "5 ug/mL", f"5 {MICRO_SIGN}g/mL", "5 ng/ml", "5 g/L", "5 ppmv"]
)
def test_volume_based_units_refused_with_reason(text: str) -> None:
    # common practice in isotope labs: solutions are weighed, concentrations kept per mass
    with pytest.raises(UnitError) as caught:
        mass_fraction_to_ug_per_g(text)
    message = str(caught.value)
    assert "per volume" in message
    assert "mass fraction" in message


@pytest.mark.parametrize("text", ["5 mol/kg", "5 ppt", "5 mg", "5", ""])
def test_unknown_or_missing_fraction_unit(text: str) -> None:
    with pytest.raises(UnitError):
        mass_fraction_to_ug_per_g(text)


@pytest.mark.parametrize(
    ("value", "step", "finer"),
    [
        ("2.150", "0.001", False),
        ("2.15", "0.001", False),
        ("2", "0.001", False),
        ("2.1505", "0.001", True),
        ("2.15", "0.1", True),
        ("2.150", "0.002", False),
        ("2.151", "0.002", True),
        ("2.1500", "0.0001", False),
    ],
)
def test_decimals_below(value: str, step: str, finer: bool) -> None:
    # common practice: a reading cannot carry more decimals than the balance's readability
    assert decimals_below(Decimal(value), Decimal(step)) is finer


@pytest.mark.parametrize("step", ["0", "-0.001"])
def test_decimals_below_needs_positive_step(step: str) -> None:
    with pytest.raises(UnitError, match="positive"):
        decimals_below(Decimal("2.15"), Decimal(step))


def test_decimals_below_huge_value() -> None:
    # 10^30 is a whole multiple of 0.001 (arithmetic)
    assert decimals_below(Decimal("1e30"), Decimal("0.001")) is False
