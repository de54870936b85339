"""Isotope masses against periodictable, and the mass-dependent fractionation factors."""

from __future__ import annotations

import math

import periodictable
import pytest

from tracker.domain.isotopes import (
    ISOTOPE_MASS,
    LAWS,
    Law,
    convert_delta,
    equilibrium_factor,
    exponential_factor,
    has_ratio,
    law_factor,
    parse_ratio,
    predicted_delta,
)


@pytest.mark.parametrize("symbol", sorted(ISOTOPE_MASS))
def test_masses_agree_with_periodictable(symbol: str) -> None:
    # periodictable 2.1 (AME2020 atomic masses, Wang et al. 2021) as the reference library
    element = getattr(periodictable, symbol)
    for number, mass in ISOTOPE_MASS[symbol].items():
        assert mass == pytest.approx(element[number].mass, rel=1e-12)
    stable = {iso.isotope for iso in element if iso.abundance > 0}
    assert set(ISOTOPE_MASS[symbol]) == stable


def test_calcium_factors() -> None:
    # check-values.md (periodictable masses): exponential k = 2.04832, equilibrium 2.09945;
    # "about 2.05" is the commonly quoted value (common practice)
    k = exponential_factor("Ca", "44/40", "44/42")
    assert k == pytest.approx(2.04832, abs=5e-6)
    assert k == pytest.approx(2.05, abs=0.005)
    assert equilibrium_factor("Ca", "44/40", "44/42") == pytest.approx(2.09945, abs=5e-6)
    ca = ISOTOPE_MASS["Ca"]
    assert k == pytest.approx(math.log(ca[44] / ca[40]) / math.log(ca[44] / ca[42]), rel=1e-15)


def test_strontium_factor() -> None:
    # check-values.md: δ87/86Sr ≈ 0.50359·δ88/86Sr under the exponential law
    assert exponential_factor("Sr", "87/86", "88/86") == pytest.approx(0.50359, abs=5e-6)


def test_exact_exponential_prediction() -> None:
    # check-values.md: δ44/42 = +1.000 → δ44/40 = +2.049393 ‰; −1.000 → −2.047246 ‰
    k = exponential_factor("Ca", "44/40", "44/42")
    assert predicted_delta(1.0, k) == pytest.approx(2.049393, abs=5e-7)
    assert predicted_delta(-1.0, k) == pytest.approx(-2.047246, abs=5e-7)


@pytest.mark.parametrize("bad", ["44-40", "44/44", "a/40", "44/"])
def test_bad_ratio_names(bad: str) -> None:
    with pytest.raises(ValueError):
        parse_ratio(bad)


def pt_mass(number: int) -> float:
    """A calcium isotope's mass from periodictable 2.1 (AME2020): the reference library."""
    return float(periodictable.Ca[number].mass)


def law_k(law: str, wanted: tuple[int, int], measured: tuple[int, int]) -> float:
    """k written out independently from periodictable's masses (Young et al. 2002 forms:
    exponential ln(mi/mj), equilibrium 1/mj − 1/mi)."""
    (i, j), (p, q) = wanted, measured
    if law == "exponential":
        return math.log(pt_mass(i) / pt_mass(j)) / math.log(pt_mass(p) / pt_mass(q))
    return (1 / pt_mass(j) - 1 / pt_mass(i)) / (1 / pt_mass(q) - 1 / pt_mass(p))


@pytest.mark.parametrize("law", LAWS)
@pytest.mark.parametrize(
    ("measured", "wanted"), [("44/42", "44/40"), ("43/42", "44/40"), ("44/40", "43/42")]
)
@pytest.mark.parametrize(("value", "two_sd"), [(-0.85, 0.12), (1.6, 0.07), (0.0, None)])
def test_conversions_agree_with_periodictable_masses(
    law: Law, measured: str, wanted: str, value: float, two_sd: float | None
) -> None:
    a, b = (tuple(int(x) for x in r.split("/")) for r in (wanted, measured))
    k = law_k(law, (a[0], a[1]), (b[0], b[1]))
    converted = convert_delta("Ca", value, two_sd, measured, wanted, law)
    assert converted.factor == pytest.approx(k, rel=1e-12)
    assert converted.law == law
    # exact: 1 + δa/1000 = (1 + δb/1000)^k, i.e. δ' = 1000 ln(1 + δ/1000) scales by k
    exact = 1000 * math.expm1(k * math.log1p(value / 1000))
    assert converted.value == pytest.approx(exact, rel=1e-12, abs=1e-12)
    if value:  # the exact form is not the linear k·δ: they differ by ≈ k(k−1)δ²/2000
        assert abs(converted.value - k * value) > abs(k * (k - 1) * value**2 / 2000) / 2
    if two_sd is None:
        assert converted.two_sd is None
    else:  # a small spread carried through the map numerically (central difference)
        h = 1e-6
        up = 1000 * math.expm1(k * math.log1p((value + h) / 1000))
        down = 1000 * math.expm1(k * math.log1p((value - h) / 1000))
        assert converted.two_sd == pytest.approx(two_sd * (up - down) / (2 * h), rel=1e-7)


def test_the_exponential_k_for_44_40_from_44_42_is_about_2_05() -> None:
    # from memory: δ44/40 ≈ 2.05 × δ44/42 under the kinetic law is the usual quoted factor
    assert convert_delta("Ca", 1.0, 0.1, "44/42", "44/40", "exponential").factor == (
        pytest.approx(2.05, abs=0.01)
    )
    # from memory: the equilibrium factor is a little larger, about 2.10
    assert law_factor("Ca", "44/40", "44/42", "equilibrium") == pytest.approx(2.10, abs=0.01)


def test_a_ratio_the_element_has_no_isotope_for_is_refused() -> None:
    assert has_ratio("Ca", "44/40") and has_ratio("Ca", "43/42")
    assert not has_ratio("Ca", "45/40") and not has_ratio("Sr", "44/40")
    with pytest.raises(ValueError, match="no stable isotope 45"):
        convert_delta("Ca", 1.0, None, "44/42", "45/40", "exponential")
