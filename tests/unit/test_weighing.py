"""Mass by difference and its uncertainty from the balance's readability (GUM)."""

from __future__ import annotations

import math
from decimal import Decimal

import pytest
from uncertainties import ufloat

from tracker.domain.weighing import MassByDifference, reading_uncertainty

TARE = Decimal("1234.567")
GROSS = Decimal("1236.717")
D = Decimal("0.001")  # microbalance readability in mg (check-values.md, common practice)


@pytest.mark.parametrize("d", [0.1, 0.01, 0.001, 0.0001])
def test_reading_uncertainty_is_rectangular(d: float) -> None:
    # GUM JCGM 100:2008 F.2.2.1 and 4.3.7: rounding to d is rectangular with half-width a = d/2,
    # u = a/√3 = d/√12
    half_width = d / 2
    assert reading_uncertainty(d) == pytest.approx(half_width / math.sqrt(3), rel=1e-12)


def test_reading_uncertainty_worked_by_hand() -> None:
    # by hand: √12 = 3.464101615...; 0.001 / 3.464101615 = 0.000288675
    assert reading_uncertainty(0.001) == pytest.approx(0.000288675, abs=1e-9)


def test_net_is_exact_decimal() -> None:
    weighing = MassByDifference(tare=TARE, gross=GROSS, readability=D)
    assert weighing.net == Decimal("2.150")
    assert isinstance(weighing.net, Decimal)


def test_mass_by_difference_worked_by_hand() -> None:
    # GUM JCGM 100:2008 5.1.2 (independent inputs, sensitivities +1 and −1):
    # u(m)² = u(gross)² + u(tare)² = 2·d²/12 → u(m) = d/√6; by hand 0.001/2.449490 = 0.000408248
    result = MassByDifference(tare=TARE, gross=GROSS, readability=D).as_ufloat()
    assert result.nominal_value == pytest.approx(2.150, abs=1e-9)
    assert result.std_dev == pytest.approx(0.001 / math.sqrt(6), rel=1e-12)
    assert result.std_dev == pytest.approx(0.000408248, abs=1e-9)


def test_mass_by_difference_against_uncertainties_package() -> None:
    # reference: the uncertainties package (linear propagation, independent variables)
    u_reading = 0.001 / math.sqrt(12)
    expected = ufloat(1236.717, u_reading) - ufloat(1234.567, u_reading)
    result = MassByDifference(tare=TARE, gross=GROSS, readability=D).as_ufloat()
    assert result.nominal_value == pytest.approx(expected.nominal_value, rel=1e-12)
    assert result.std_dev == pytest.approx(expected.std_dev, rel=1e-12)


def test_uncertainty_scales_with_readability_not_mass() -> None:
    # GUM F.2.2.1: the rounding uncertainty depends on the resolution only
    small = MassByDifference(Decimal("10.000"), Decimal("10.005"), D).as_ufloat()
    large = MassByDifference(Decimal("10.000"), Decimal("90.000"), D).as_ufloat()
    assert small.std_dev == pytest.approx(large.std_dev, rel=1e-12)
    coarse = MassByDifference(Decimal("10.0"), Decimal("12.0"), Decimal("0.1")).as_ufloat()
    assert coarse.std_dev == pytest.approx(100 * small.std_dev, rel=1e-12)


def test_tare_and_gross_are_independent_inputs() -> None:
    # the result depends on exactly two independent variables with sensitivities +1 and −1
    result = MassByDifference(tare=TARE, gross=GROSS, readability=D).as_ufloat()
    assert sorted(result.derivatives.values()) == [-1.0, 1.0]
