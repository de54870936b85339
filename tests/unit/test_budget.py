"""Budgets: amounts combined in quadrature, overdraws at k = 2, element masses (GUM)."""

from __future__ import annotations

import math

import pytest

from tracker.domain.budget import (
    COVERAGE_FACTOR,
    Amount,
    by_difference,
    element_mass_ug,
    is_significant,
    overdraws,
    remaining,
    total,
)

D = 0.001  # microbalance readability, mg (check-values.md, common practice)
U_BY_DIFFERENCE = D / math.sqrt(6)  # GUM JCGM 100:2008 F.2.2.1, two readings


def test_sum_and_difference_in_quadrature() -> None:
    # GUM JCGM 100:2008 eq. (10) with sensitivities ±1: u = √(u1² + u2²); 3-4-5 by hand
    a, b = Amount(1.0, 0.3), Amount(2.0, 0.4)
    assert (a + b).value == pytest.approx(3.0)
    assert (a + b).u == pytest.approx(0.5, rel=1e-12)
    assert (b - a).value == pytest.approx(1.0)
    assert (b - a).u == pytest.approx(0.5, rel=1e-12)


def test_total_of_nothing_is_exact_zero() -> None:
    assert total([]) == Amount(0.0, 0.0)


def test_remaining() -> None:
    # GUM eq. (10) by hand: 10 − 2 − 3 = 5; u = √(0.3² + 0.4² + 1.2²) = √1.69 = 1.3
    left = remaining(Amount(10.0, 0.3), [Amount(2.0, 0.4), Amount(3.0, 1.2)])
    assert left.value == pytest.approx(5.0)
    assert left.u == pytest.approx(1.3, rel=1e-12)
    assert remaining(Amount(10.0, 0.3), []) == Amount(10.0, 0.3)


def test_coverage_factor() -> None:
    # GUM JCGM 100:2008 6.2.3 / 6.3.3: k = 2 gives about 95 % for a normal distribution
    assert COVERAGE_FACTOR == 2.0


def _powder(mg: float) -> Amount:
    """A powder weighed by difference on the microbalance: u = d/√6, rounding at most ±d."""
    powder = by_difference(mg, D)
    assert powder.u == pytest.approx(U_BY_DIFFERENCE, rel=1e-12)
    return powder


@pytest.mark.parametrize(("excess", "refused"), [(-0.5, False), (0.0, False), (0.001, False)])
def test_rounding_size_excess_is_not_an_overdraw(excess: float, refused: bool) -> None:
    assert overdraws(_powder(2.150), _powder(2.150 + excess)) is refused


def test_two_digit_excess_is_not_an_overdraw() -> None:
    # brief / check-values.md (common practice): on a 0.001 mg balance a 0.002 mg excess is
    # rounding (four readings, each off by up to d/2), not an overdraw
    assert overdraws(_powder(2.150), _powder(2.152)) is False


def test_real_overdraw() -> None:
    # brief: 0.2 mg too much on a 0.001 mg balance is an overdraw
    assert overdraws(_powder(2.150), _powder(2.350)) is True


def test_overdraw_threshold_is_k_times_u() -> None:
    # by hand: gap u = √(0.3² + 0.4²) = 0.5, k·u = 1.0
    available = Amount(10.0, 0.3)
    assert overdraws(available, Amount(10.9, 0.4)) is False
    assert overdraws(available, Amount(11.1, 0.4)) is True
    assert overdraws(available, Amount(10.9, 0.4), k=1.0) is True


@pytest.mark.parametrize(
    ("amount", "significant"),
    [
        (Amount(3.0, 1.0), True),
        (Amount(2.0, 1.0), False),  # equal to k·u: not larger than it
        (Amount(1.0, 1.0), False),
        (Amount(0.0, 0.0), False),
        (Amount(-5.0, 1.0), False),
        (Amount(0.001, 0.0), True),
    ],
)
def test_is_significant(amount: Amount, significant: bool) -> None:
    # GUM 6.2: compared with the expanded uncertainty U = k·u, k = 2
    assert is_significant(amount) is significant


def _relative_product_u(value: float, *relative: float) -> float:
    """GUM JCGM 100:2008 5.1.6: for a product, relative uncertainties add in quadrature."""
    return abs(value) * math.sqrt(sum(r * r for r in relative))


def test_element_mass_worked_example() -> None:
    # check-values.md worked example (GUM root-sum-square; uncertainties 3.2 agrees):
    # powder 2.150 ± 0.002 mg × Ca fraction 0.37 ± 0.01 → 795.5 ± 21.51 µg (2.704 %)
    powder_g = Amount(2.150e-3, 0.002e-3)
    fraction_ug_per_g = Amount(0.37e6, 0.01e6)
    result = element_mass_ug(powder_g, fraction_ug_per_g)
    by_hand = math.sqrt((0.37e6 * 0.002e-3) ** 2 + (2.150e-3 * 0.01e6) ** 2)
    assert result.value == pytest.approx(795.5, rel=1e-12)
    assert result.u == pytest.approx(by_hand, rel=1e-12)
    assert result.u == pytest.approx(21.51, abs=0.005)
    assert result.u / result.value == pytest.approx(0.02704, abs=5e-6)


def test_aliquot_worked_example() -> None:
    # check-values.md: one tenth aliquot, 0.1000 ± 0.0002 g of 1.0000 ± 0.0002 g solution
    # holding 795.5 ± 21.51 µg → 79.55 ± 2.157 µg (GUM 5.1.6, relative u in quadrature)
    element = Amount(795.5, math.sqrt((0.37e6 * 0.002e-3) ** 2 + (2.150e-3 * 0.01e6) ** 2))
    solution_g = Amount(1.0000, 0.0002)
    concentration = Amount(
        element.value / solution_g.value,
        _relative_product_u(element.value, element.u / element.value, 0.0002 / 1.0000),
    )
    result = element_mass_ug(Amount(0.1000, 0.0002), concentration)
    expected_u = _relative_product_u(
        79.55, element.u / element.value, 0.0002 / 1.0000, 0.0002 / 0.1000
    )
    assert result.value == pytest.approx(79.55, rel=1e-12)
    assert result.u == pytest.approx(expected_u, rel=1e-12)
    assert result.u == pytest.approx(2.157, abs=0.0005)
