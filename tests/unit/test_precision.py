"""Numbers in text: the precision rules hold for any value, and agree with the GUM's examples."""

from __future__ import annotations

from collections.abc import Callable
from decimal import Decimal

import pytest
from hypothesis import given
from hypothesis import strategies as st

from tracker.domain import precision
from tracker.domain.precision import PLUS_MINUS, value_u

finite = st.floats(min_value=-1e9, max_value=1e9, allow_nan=False, allow_infinity=False)
positive = st.floats(min_value=1e-12, max_value=1e6, allow_nan=False, allow_infinity=False)
typed = st.decimals(
    min_value=-(10**6), max_value=10**6, allow_nan=False, allow_infinity=False, places=6
)


def _places(digits: str) -> int:
    return len(digits.split(".")[1]) if "." in digits else 0


def _significant(digits: str, places: int) -> int:
    """Significant digits of a shown uncertainty, counted down to the place it is shown at."""
    return Decimal(digits).adjusted() + places + 1


@given(
    value=st.one_of(finite, typed),
    u=st.one_of(positive, st.decimals(min_value="1e-9", max_value=10**5, places=9)),
)
def test_any_uncertainty_has_one_or_two_digits_and_the_value_its_place(
    value: float | Decimal, u: float | Decimal
) -> None:
    text = value_u(value, u, "mg")
    shown_value, rest = text.split(PLUS_MINUS)
    shown_u, unit = rest.split(" ")
    assert unit == "mg"
    assert Decimal(shown_u) > 0  # never "± 0.000"
    places = precision.uncertainty_places(u)
    assert places is not None
    assert _places(shown_u) == _places(shown_value) == max(places, 0)
    assert _significant(shown_u, places) in (1, 2)
    step = Decimal(1).scaleb(-places)
    assert abs(Decimal(shown_u) - Decimal(str(u))) <= step / 2
    assert abs(Decimal(shown_value) - Decimal(str(value))) <= step / 2


@given(value=st.one_of(finite, typed), u=st.sampled_from([None, 0, 0.0, Decimal(0), -0.5]))
def test_no_uncertainty_means_no_plus_minus(value: float | Decimal, u: float | None) -> None:
    text = value_u(value, u, "µg")
    assert "±" not in text
    assert text.endswith(" µg")
    assert not text.startswith("-0") or Decimal(text.split()[0]) != 0  # no negative zero


@given(value=typed)
def test_an_exact_decimal_without_uncertainty_keeps_its_digits(value: Decimal) -> None:
    assert (
        value_u(value, None, "mg") == f"{format(abs(value) if value.is_zero() else value, 'f')} mg"
    )


@given(value=finite.filter(lambda x: abs(x) > 1e-200))  # no underflow below
def test_a_small_value_is_never_shown_as_zero(value: float) -> None:
    shown = value_u(value / 1e12, None, "g")
    assert Decimal(shown.split()[0]) != 0


KINDS: list[tuple[Callable[[float, float], str], str]] = [
    (precision.mass_mg, "mg"),
    (precision.grams, "g"),
    (precision.micrograms, "µg"),
    (precision.nanograms, "ng"),
    (precision.concentration, "µg/g"),
    (precision.percent, "%"),
    (precision.delta, "‰"),
]


@pytest.mark.parametrize(("show", "unit"), KINDS)
@given(value=st.floats(min_value=0.2, max_value=9000), u=positive)
def test_every_kind_writes_its_unit(
    show: Callable[[float, float], str], unit: str, value: float, u: float
) -> None:
    assert show(value, u).endswith(f" {unit}")
    assert show(value, 0).endswith(f" {unit}")


# The Particle Data Group's rule (Review of Particle Physics, "Introduction"; from memory):
# three leading digits 100-354 keep two significant digits, 355-949 one, 950-999 round up
# to 1000 and keep two. Its own examples: 0.827 -> 0.8, 0.357 -> 0.4, 0.352 -> 0.35,
# 0.996 -> 1.0 (from memory).
@pytest.mark.parametrize(
    ("u", "expected"), [(0.827, "0.8"), (0.357, "0.4"), (0.352, "0.35"), (0.996, "1.0")]
)
def test_the_particle_data_group_examples(u: float, expected: str) -> None:
    assert value_u(10.0, u).split(PLUS_MINUS)[1] == expected


# Worked examples. The GUM (JCGM 100:2008) §7.2.2 reports m_s = 100,021 47 g with
# u_c = 0,35 mg, and §7.2.6 rounds y = 10,057 62 Ω with u_c = 27 mΩ to 10,058 Ω and says
# u = 28,05 kHz should be rounded down to 28 kHz (all from memory). It also allows rounding
# an uncertainty up (10,47 mΩ to 11 mΩ); tracker rounds to the nearest, as §7.2.6 permits.
@pytest.mark.parametrize(
    ("value", "u", "unit", "expected"),
    [
        (100.02147, 0.00035, "g", "100.02147 ± 0.00035 g"),  # GUM 7.2.2 (from memory)
        (10.05762, 0.027, "Ω", "10.058 ± 0.027 Ω"),  # GUM 7.2.6 (from memory)
        (1234.0, 28.05, "kHz", "1234 ± 28 kHz"),  # GUM 7.2.6: 28.05 -> 28 (from memory)
        # Worked by hand with the same rule:
        (2.561, 0.000412, "mg", "2.5610 ± 0.0004 mg"),  # 412: one digit
        (795.5, 21.51, "mg", "796 ± 22 mg"),
        (79.5512, 2.157, "mg", "79.6 ± 2.2 mg"),
        (0.87304, 0.01910, "mg", "0.873 ± 0.019 mg"),
        (1.2345678, 0.0123, "mg", "1.235 ± 0.012 mg"),
        (-3.14159, 0.25, "mg", "-3.14 ± 0.25 mg"),
        (12.3456, 0.0996, "mg", "12.35 ± 0.10 mg"),  # decided after rounding: not 0.100
        (5.0, 0.996, "mg", "5.0 ± 1.0 mg"),
        (52349.0, 996.0, "mg", "52300 ± 1000 mg"),  # hundreds: still two digits (10 × 100)
    ],
)
def test_worked_examples(value: float, u: float, unit: str, expected: str) -> None:
    assert value_u(value, u, unit) == expected


def test_a_strontium_ratio_keeps_six_decimals() -> None:
    # 87Sr/86Sr is reported to 6 decimals with a 2SD in the 1e-5 range (common practice)
    assert precision.ratio(0.70788, 0.000019) == "0.707880 ± 0.000019"
    assert precision.ratio(0.70788) == "0.707880"
    assert precision.result("ratio", 0.70788, 0.000019, 3) == "0.707880 ± 0.000019 (2SD, n=3)"


def test_a_calcium_delta_follows_its_two_sd() -> None:
    # Ca δ44/40 with a 2SD of ~0.1 ‰ is reported to 2 decimals (common practice)
    assert precision.delta(0.884, 0.150) == "+0.88 ± 0.15 ‰"
    assert precision.delta(-1.2345) == "-1.235 ‰"  # no spread: 3 decimals
    assert precision.result("delta", 0.884, 0.15, 4) == "+0.88 ± 0.15 ‰ (2SD, n=4)"


def test_a_zero_uncertainty_is_not_written() -> None:
    assert precision.result("ratio", 0.70788, 0.0, 1) == "0.707880 (n=1)"
    assert precision.micrograms(12.5, 0) == "12.50 µg"


def test_a_typed_mass_keeps_its_trailing_zeros() -> None:
    assert precision.mass_mg(Decimal("6.020")) == "6.020 mg"
    # weighed on a 0.01 mg balance: u = 0.01 / sqrt(6) mg = 0.0041 mg, one digit (410)
    assert precision.mass_mg(Decimal("6.020"), Decimal("0.004082")) == "6.020 ± 0.004 mg"
    assert precision.mass_mg(Decimal("0.0500")) == "50.0 µg"  # the decimal point moves
    assert precision.mass_mg(Decimal("12000.50")) == "12.00050 g"
    assert precision.limit_mg(Decimal("6.020")) == "6.020 mg"
    assert precision.limit_mg(50.0) == "50 mg"  # a float has only its shortest text
    assert precision.limit_mg(None) == "no limit"


def test_a_computed_percentage_is_rounded_and_a_typed_one_kept() -> None:
    assert precision.percent(0.0019035057722384910, places=2) == "0.19 %"
    assert precision.percent(0.981, 0.0213) == "98.1 ± 2.1 %"
    assert precision.percent(Decimal("0.9500")) == "95.00 %"


def test_absent_values_are_a_dash() -> None:
    assert precision.ratio(None) == precision.ABSENT
    assert precision.mass_mg(float("nan")) == precision.ABSENT
