"""Mass budgets: what is left of a parent, whether children overdraw it, element amounts.

Uncertainties are standard uncertainties (k = 1) combined by the GUM law of
propagation (the ``uncertainties`` package, independent inputs). Each amount
also carries ``bound``, the worst case its balance's rounding can reach (a mass
by difference on a balance reading to d is off by at most d); bounds add
linearly. A child may exceed what remains by no more than the larger of the
expanded uncertainty (k = 2) and that rounding bound — four readings can round
by 2d together, more than 2u of a rectangular model — so rounding at the last
digit never refuses a real weighing, while a real overdraw always is refused.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass
from decimal import Decimal

# A stored measured value (exact, Decimal) or a computed one (float). Budgets propagate
# uncertainties in floats: a stored value becomes a float here, at the computation's edge.
Measured = Decimal | float


def as_float(value: Measured | None) -> float | None:
    """A stored value (or nothing) for computing with."""
    return None if value is None else float(value)


COVERAGE_FACTOR = 2.0  # k = 2, about 95 % for a normal distribution (GUM 6.2)


@dataclass(frozen=True)
class Amount:
    """A value with its standard uncertainty and worst-case rounding bound, in one unit."""

    value: float
    u: float
    bound: float = 0.0

    def __add__(self, other: Amount) -> Amount:
        return Amount(
            self.value + other.value, math.hypot(self.u, other.u), self.bound + other.bound
        )

    def __sub__(self, other: Amount) -> Amount:
        return Amount(
            self.value - other.value, math.hypot(self.u, other.u), self.bound + other.bound
        )

    @classmethod
    def of(cls, value: Measured, u: Measured) -> Amount:
        """A stored value and its standard uncertainty, for computing with."""
        return cls(float(value), float(u))


SQRT6 = math.sqrt(6.0)


def by_difference(value: Measured, readability: Measured) -> Amount:
    """A mass from two readings: u = d/√6 (GUM F.2.2.1), rounding error at most ±d."""
    d = float(readability)
    return Amount(float(value), d / SQRT6, d)


def weighed(value: Measured, u: Measured) -> Amount:
    """A stored mass by difference whose only uncertainty is rounding: its bound is √6·u."""
    return Amount(float(value), float(u), SQRT6 * float(u))


ZERO = Amount(0.0, 0.0)


def total(amounts: Iterable[Amount]) -> Amount:
    result = ZERO
    for amount in amounts:
        result = result + amount
    return result


def remaining(parent: Amount, children: Iterable[Amount]) -> Amount:
    """What is left of the parent after the children, with the combined uncertainty."""
    return parent - total(children)


def tolerance(amount: Amount, k: float = COVERAGE_FACTOR) -> float:
    """How far an amount may be from zero by measurement alone: max(k·u, rounding bound)."""
    return max(k * amount.u, amount.bound)


def overdraws(available: Amount, request: Amount, k: float = COVERAGE_FACTOR) -> bool:
    """True when ``request`` exceeds ``available`` by more than measurement can explain."""
    return is_significant(request - available, k)


def is_significant(amount: Amount, k: float = COVERAGE_FACTOR) -> bool:
    """True when an amount is larger than measurement alone can explain.

    Equality within float noise counts as explained: 2.152 − 2.150 is 0.0020000000000002.
    """
    limit = tolerance(amount, k)
    return amount.value > limit and not math.isclose(amount.value, limit, rel_tol=1e-9)


def element_mass_ug(solution_mass_g: Amount, fraction_ug_per_g: Amount) -> Amount:
    """Element mass (µg) = solution mass (g) × element mass fraction (µg/g).

    ``uncertainties`` (and the numpy it loads) is imported here, not at the top: budgets are
    read on every start of the interface and most of them never multiply two amounts.
    """
    from uncertainties import ufloat

    product = ufloat(solution_mass_g.value, solution_mass_g.u) * ufloat(
        fraction_ug_per_g.value, fraction_ug_per_g.u
    )
    return Amount(product.nominal_value, product.std_dev)
