"""Isotope masses against periodictable, and the mass-dependent fractionation factors."""

from __future__ import annotations

import math

import periodictable
import pytest

from tracker.domain.isotopes import (
    ISOTOPE_MASS,
    equilibrium_factor,
    exponential_factor,
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


def test_ratios_must_share_an_isotope() -> None:
    with pytest.raises(ValueError, match="share an isotope"):
        exponential_factor("Ca", "44/40", "43/42")
