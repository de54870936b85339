"""Mass budgets: what is left of a parent, whether children overdraw it, element amounts.

Uncertainties are standard uncertainties (k = 1) combined by the GUM law of
propagation (the ``uncertainties`` package, independent inputs). A child may
exceed what remains only by less than the expanded uncertainty (k = 2) of the
comparison — so rounding at the balance's last digit never refuses a real
weighing, while a real overdraw of a parent always is refused.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass

from uncertainties import ufloat

COVERAGE_FACTOR = 2.0  # k = 2, about 95 % for a normal distribution (GUM 6.2)


@dataclass(frozen=True)
class Amount:
    """A value with its standard uncertainty, in the unit the caller keeps track of."""

    value: float
    u: float

    def __add__(self, other: Amount) -> Amount:
        return Amount(self.value + other.value, math.hypot(self.u, other.u))

    def __sub__(self, other: Amount) -> Amount:
        return Amount(self.value - other.value, math.hypot(self.u, other.u))


ZERO = Amount(0.0, 0.0)


def total(amounts: Iterable[Amount]) -> Amount:
    result = ZERO
    for amount in amounts:
        result = result + amount
    return result


def remaining(parent: Amount, children: Iterable[Amount]) -> Amount:
    """What is left of the parent after the children, with the combined uncertainty."""
    return parent - total(children)


def overdraws(available: Amount, request: Amount, k: float = COVERAGE_FACTOR) -> bool:
    """True when ``request`` exceeds ``available`` by more than k × u of their difference."""
    gap = request - available
    return gap.value > k * gap.u


def is_significant(amount: Amount, k: float = COVERAGE_FACTOR) -> bool:
    """True when an amount is larger than its own expanded uncertainty (k × u)."""
    return amount.value > k * amount.u


def element_mass_ug(solution_mass_g: Amount, fraction_ug_per_g: Amount) -> Amount:
    """Element mass (µg) = solution mass (g) × element mass fraction (µg/g)."""
    product = ufloat(solution_mass_g.value, solution_mass_g.u) * ufloat(
        fraction_ug_per_g.value, fraction_ug_per_g.u
    )
    return Amount(product.nominal_value, product.std_dev)
