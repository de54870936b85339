"""Isotope masses against periodictable, and the mass-dependent fractionation factors."""

from __future__ import annotations

import math
import random
import statistics

import numpy
import periodictable
import pytest

from tracker.domain.isotopes import (
    ISOTOPE_MASS,
    LAWS,
    Law,
    convert_delta,
    departure_of_one_run,
    departure_of_replicates,
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


def law_runs(offset: float, n: int = 8, seed: int = 7) -> tuple[list[float], list[float]]:
    """Runs whose mass bias jitters along the law (0.1 ‰ in δ44/42, as a drifting instrument
    moves both ratios together), δ44/40 offset from the law by ``offset``, and a little
    independent noise (0.005 ‰) on each ratio. Invented numbers."""
    rng = random.Random(seed)
    k = exponential_factor("Ca", "44/40", "44/42")
    b = [0.40 + rng.gauss(0, 0.1) for _ in range(n)]
    a = [predicted_delta(x, k) + offset + rng.gauss(0, 0.005) for x in b]
    return a, [x + rng.gauss(0, 0.005) for x in b]


def test_a_departure_from_replicates_carries_the_covariance_of_the_two_ratios() -> None:
    k = exponential_factor("Ca", "44/40", "44/42")
    a, b = law_runs(offset=0.0)
    found = departure_of_replicates(a, b, k)
    assert found is not None and found.basis == "replicates"
    # Independent route: first-order variance of a − k′b from numpy's sample covariance,
    # var = var(a) + k′²var(b) − 2k′cov(a, b) (GUM, JCGM 100:2008, eq. 13), k′ the law's
    # slope at the mean δb.
    cov = numpy.cov(a, b, ddof=1)
    slope = k * (1 + statistics.fmean(b) / 1000) ** (k - 1)
    variance = cov[0, 0] + slope**2 * cov[1, 1] - 2 * slope * cov[0, 1]
    assert found.se == pytest.approx(math.sqrt(variance / len(a)), rel=1e-3)
    assert not found.significant


def test_an_offset_hidden_by_correlated_runs_is_found() -> None:
    k = exponential_factor("Ca", "44/40", "44/42")
    a, b = law_runs(offset=0.05)
    found = departure_of_replicates(a, b, k)
    assert found is not None and found.significant
    assert found.residual == pytest.approx(0.05, abs=0.01)
    # Treated as independent (the SE of each mean, added in quadrature), the same runs
    # would pass: the jitter along the law swamps the offset.
    n = len(a)
    independent = math.hypot(
        statistics.stdev(a) / math.sqrt(n), k * statistics.stdev(b) / math.sqrt(n)
    )
    assert abs(found.residual) < 2 * independent


def test_a_single_run_is_judged_from_its_internal_errors() -> None:
    k = exponential_factor("Ca", "44/40", "44/42")
    b, u_a, u_b = 0.40, 0.010, 0.006
    on_law = predicted_delta(b, k)
    # the law's slope by a central difference, independent of the code's derivative
    h = 1e-4
    slope = (predicted_delta(b + h, k) - predicted_delta(b - h, k)) / (2 * h)
    found = departure_of_one_run(on_law + 0.05, u_a, b, u_b, k)
    assert found.basis == "internal errors"
    assert found.se == pytest.approx(math.hypot(u_a, slope * u_b), rel=1e-9)
    assert found.residual == pytest.approx(0.05, abs=1e-12)
    assert found.significant
    assert not departure_of_one_run(on_law + 0.01, u_a, b, u_b, k).significant


def test_a_departure_needs_two_paired_runs() -> None:
    assert departure_of_replicates([0.5], [0.25], 2.0) is None
    with pytest.raises(ValueError):
        departure_of_replicates([0.5, 0.6], [0.25], 2.0)
