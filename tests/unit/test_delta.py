"""δ notation, bracketing, changes of scale, replicate statistics and blank mixing."""

from __future__ import annotations

import math
import statistics

import numpy
import pytest

from tracker.domain.delta import (
    T_975,
    blank_corrected,
    bracketed_delta,
    bracketed_delta_u,
    change_scale,
    coverage_95,
    delta_permil,
    invert,
    replicate_stats,
)


def test_delta_definition() -> None:
    # IUPAC (Coplen 2011, Rapid Commun. Mass Spectrom. 25:2538): δ = R/Rstd − 1, in ‰ = 1e-3
    assert delta_permil(1.001, 1.0) == pytest.approx(1.0, abs=1e-12)
    assert delta_permil(0.9995, 1.0) == pytest.approx(-0.5, abs=1e-12)
    with pytest.raises(ValueError):
        delta_permil(0.0, 1.0)


def test_bracketing_worked_example() -> None:
    # check-values.md worked example: sample 3.21000, standards 3.20700 and 3.20740 → +0.87304 ‰
    by_hand = (3.21000 / ((3.20700 + 3.20740) / 2) - 1) * 1000
    assert bracketed_delta(3.21000, 3.20700, 3.20740) == pytest.approx(by_hand, abs=1e-12)
    assert by_hand == pytest.approx(0.87304, abs=5e-6)


def test_bracketing_uncertainty_matches_gum_propagation() -> None:
    # check-values.md: ± 5e-5 on each of the three ratios gives ± 0.01910 ‰ (GUM, first order)
    u = bracketed_delta_u(3.21000, 5e-5, 3.20700, 5e-5, 3.20740, 5e-5)
    assert u == pytest.approx(0.01910, abs=5e-6)
    # the same with the uncertainties package (GUM linear propagation) as the reference
    from uncertainties import ufloat

    value = ufloat(3.21000, 5e-5) / ((ufloat(3.20700, 5e-5) + ufloat(3.20740, 5e-5)) / 2) - 1
    assert u == pytest.approx(value.std_dev * 1000, rel=1e-9)


def test_change_of_scale_is_exact() -> None:
    # Coplen 2011: δX/A = (1 + δX/B)(1 + δB/A) − 1. check-values.md (from memory: seawater is
    # +1.88 ‰ vs SRM 915a): SRM 915a on the seawater scale is −1.87647 ‰, and a sample at
    # +1.00 ‰ vs SRM 915a is −0.87835 ‰ on the seawater scale.
    assert invert(1.88) == pytest.approx(-1.87647, abs=5e-6)
    assert change_scale(1.00, invert(1.88)) == pytest.approx(-0.87835, abs=5e-6)
    assert change_scale(0.0, 1.88) == pytest.approx(1.88, abs=1e-12)
    # composing there and back is the identity (to rounding)
    assert change_scale(change_scale(0.731, 1.88), invert(1.88)) == pytest.approx(0.731, abs=1e-12)
    # the additive shortcut is wrong by δ·δ/1000 — the exact form differs measurably
    assert change_scale(10.0, 10.0) == pytest.approx(20.1, abs=1e-12)


@pytest.mark.parametrize("values", [[0.12, 0.15, 0.09, 0.11], [1.0, 1.2], [-0.3, -0.28, -0.35]])
def test_replicate_statistics_against_statistics_and_numpy(values: list[float]) -> None:
    stats = replicate_stats(values)
    assert stats.mean == pytest.approx(statistics.fmean(values), abs=1e-15)
    # sample standard deviation (n − 1): Python statistics.stdev and numpy std(ddof=1)
    assert stats.sd == pytest.approx(statistics.stdev(values), rel=1e-12)
    assert stats.sd == pytest.approx(float(numpy.std(values, ddof=1)), rel=1e-12)
    assert stats.two_sd == pytest.approx(2 * statistics.stdev(values), rel=1e-12)
    assert stats.two_se == pytest.approx(2 * statistics.stdev(values) / math.sqrt(len(values)))
    assert stats.n == len(values)


def test_single_run_has_no_spread() -> None:
    stats = replicate_stats([0.5])
    assert (stats.sd, stats.two_sd, stats.two_se, stats.n) == (None, None, None, 1)
    with pytest.raises(ValueError):
        replicate_stats([])


def test_blank_mixing_correction_by_mass_balance() -> None:
    # common practice (two-component mixing): δmix·(ms + mb) = δs·ms + δb·mb. By hand: a
    # 10 000 ng sample at +1.000 ‰ with a 100 ng blank at −5.000 ‰ measures
    # (10000·1 + 100·(−5)) / 10100 = +0.940594 ‰; correcting gives back +1.000 ‰.
    mixed = (10000 * 1.0 + 100 * -5.0) / 10100
    assert blank_corrected(mixed, 10000, -5.0, 100) == pytest.approx(1.0, abs=1e-12)
    assert blank_corrected(0.5, 1000, 0.5, 50) == pytest.approx(0.5, abs=1e-12)  # same δ: no shift


def student_t_cdf(t: float, df: int, steps: int = 20000) -> float:
    """P(T ≤ t) for Student's t, by Simpson's rule on its density (the density's formula,
    e.g. NIST/SEMATECH e-Handbook of Statistical Methods, 1.3.6.6.4), from 0 to t."""
    norm = math.gamma((df + 1) / 2) / (math.sqrt(df * math.pi) * math.gamma(df / 2))

    def density(x: float) -> float:
        return float(norm * (1 + x * x / df) ** (-(df + 1) / 2))

    h = t / steps
    inner = sum((4 if i % 2 else 2) * density(i * h) for i in range(1, steps))
    return 0.5 + h / 3 * (density(0.0) + inner + density(t))


@pytest.mark.parametrize("df", range(1, len(T_975) + 1))
def test_the_t_table_gives_two_sided_95_percent(df: int) -> None:
    # each tabled quantile, rounded to three decimals, leaves 2.5 % in the upper tail
    assert student_t_cdf(T_975[df - 1], df) == pytest.approx(0.975, abs=2e-4)
    assert coverage_95(df) == T_975[df - 1]


def test_many_replicates_keep_the_widest_tabled_factor() -> None:
    assert coverage_95(200) == T_975[-1] > 1.96
    with pytest.raises(ValueError):
        coverage_95(0)
