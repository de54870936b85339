"""Dissolution recovery: how much of the element a dissolved powder should hold, and did.

A solution holds ``m`` µg of an element (its mass × the concentration measured in it).
The powder dissolved into it, ``P`` mg, should hold ``P × w`` of it, ``w`` the material's
element mass fraction (:mod:`tracker.domain.materials`). The recovery is

    R = m / (1000 µg/mg × P × w)

A stoichiometric material has one ``w``, so one recovery. Biogenic apatite has a *range*
of ``w`` (low, high), so the recovery is a range too: from ``m / (P × high)`` (the powder
was as rich as it can be) to ``m / (P × low)``. The range is the material's, not a
measurement's: each end carries the same relative uncertainty, propagated to first order
from independent inputs — the element mass (solution weighing × concentration, already
combined by :func:`tracker.domain.budget.element_mass_ug`) and the powder weighing:
u(R)/R = √((u(m)/m)² + (u(P)/P)²). The mass fraction is taken as exact.

A recovery is flagged when it lies outside the lab's window (:data:`DEFAULT_WINDOW`
unless the lab sets its own): for a range, only when the whole range lies outside, since
any point of it may be the specimen's true fraction.

Separately, :func:`beyond_ceiling` judges a measurement at entry: an element mass that the
powder cannot hold even at the material's highest possible fraction, beyond what the
uncertainty explains, is most likely a typo.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from tracker.domain import precision
from tracker.domain.budget import COVERAGE_FACTOR, Amount
from tracker.domain.text_rules import visible

UG_PER_MG = 1000.0


@dataclass(frozen=True)
class Window:
    """The recoveries (as fractions, 1.0 = 100 %) a lab accepts without a flag."""

    low: float
    high: float

    def holds(self, low: float, high: float) -> bool:
        """True unless the whole range ``low``–``high`` lies outside the window."""
        return not (high < self.low or low > self.high)

    def said(self) -> str:
        """``90–110 %``: set, not measured, so as given."""
        ends = (precision.as_given(round(end * 100, 6)) for end in (self.low, self.high))
        return "–".join(ends) + " %"


# Common practice: a complete digestion of a well-characterised material recovers its
# element within about ±10 %; labs with tighter procedures set their own window.
DEFAULT_WINDOW = Window(0.90, 1.10)


@dataclass(frozen=True)
class Recovery:
    """The recovery of one element from one dissolution; ``low == high`` for a formula."""

    element: str
    material: str
    low: float
    high: float
    u_low: float
    u_high: float
    window: Window

    @property
    def is_range(self) -> bool:
        return self.low != self.high

    @property
    def outside(self) -> bool:
        return not self.window.holds(self.low, self.high)


def recovery(
    element: str,
    material: str,
    element_ug: Amount,
    powder_mg: Amount,
    fractions: tuple[float, float],
    window: Window = DEFAULT_WINDOW,
) -> Recovery | None:
    """The recovery of ``element_ug`` from ``powder_mg`` of a material whose element mass
    fraction lies in ``fractions`` (low, high); None when the powder mass is not positive.

    First-order propagation, independent inputs (see the module's docstring)."""
    low_fraction, high_fraction = fractions
    if powder_mg.value <= 0 or low_fraction <= 0 or element_ug.value == 0:
        return None
    relative = math.hypot(element_ug.u / element_ug.value, powder_mg.u / powder_mg.value)
    powder_ug = UG_PER_MG * powder_mg.value
    low = element_ug.value / (powder_ug * high_fraction)
    high = element_ug.value / (powder_ug * low_fraction)
    return Recovery(element, material, low, high, abs(low) * relative, abs(high) * relative, window)


def beyond_ceiling(
    element_ug: Amount, powder_mg: Amount, ceiling: float, k: float = COVERAGE_FACTOR
) -> bool:
    """True when ``element_ug`` exceeds what ``powder_mg`` can hold at the fraction
    ``ceiling`` by more than k combined standard uncertainties (first order, independent)."""
    most_ug = UG_PER_MG * powder_mg.value * ceiling
    u = math.hypot(element_ug.u, UG_PER_MG * powder_mg.u * ceiling)
    return element_ug.value > most_ug + k * u


def recovery_words(r: Recovery) -> str:
    """A recovery as every front end and file writes it: ``Ca recovery 98.9 ± 1.3 %
    (hydroxyapatite)``; a range from its low to its high end; the window after it when the
    whole recovery lies outside. Numbers by :mod:`tracker.domain.precision`."""
    shown = precision.percent(r.low, r.u_low)
    if r.is_range:
        shown = f"{shown} to {precision.percent(r.high, r.u_high)}"
    text = f"{r.element} recovery {shown} ({visible(r.material)})"
    return f"{text} outside {r.window.said()}" if r.outside else text
