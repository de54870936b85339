"""Isotope masses (u) and the mass-dependent fractionation laws that relate two ratios.

Masses are the AME2020 atomic masses (Wang et al. 2021, Chinese Phys. C 45:030003) as
distributed by ``periodictable`` 2.1; a test compares every value with that package.

For two ratios of one element, e.g. 44/40 and 44/42 for calcium or 87/86 and 88/86 for
strontium (they need not share an isotope: 44/40 and 43/42 are related as well, since one
fractionation acts on every ratio of the element), mass-dependent fractionation predicts
    δ(44/40) = ((1 + δ(44/42)/1000)^k − 1) × 1000 ‰
with, for the exponential (kinetic) law, k = ln(m44/m40) / ln(m44/m42) ≈ 2.048, and for
the equilibrium law k = (1/m40 − 1/m44) / (1/m42 − 1/m44) ≈ 2.099 (Sr: 87/86 vs 88/86,
k ≈ 0.504). The power form is exact for both laws (δ' = 1000·ln(1 + δ/1000) is then
linear, δ'a = k·δ'b); k·δb is only its first-order approximation.
"""

from __future__ import annotations

import math
import statistics
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

from tracker.domain.delta import coverage_95

Law = Literal["exponential", "equilibrium"]
LAWS: tuple[Law, ...] = ("exponential", "equilibrium")
# The ratio an element's δ is usually reported on (common practice: δ44/40Ca, the larger
# spread; labs measuring 44/42 convert to it to compare with the literature).
REPORTED_RATIO = {"Ca": "44/40"}

ISOTOPE_MASS: dict[str, dict[int, float]] = {
    "Ca": {
        40: 39.962590851,
        42: 41.95861778,
        43: 42.95876638,
        44: 43.9554815,
        46: 45.9536877,
        48: 47.952522654,
    },
    "Sr": {84: 83.9134191, 86: 85.909260725, 87: 86.908877495, 88: 87.905612254},
    "Mg": {24: 23.985041689, 25: 24.98583697, 26: 25.98259297},
}


def parse_ratio(name: str) -> tuple[int, int]:
    """ "44/40" → (44, 40): numerator and denominator mass numbers."""
    top, _, bottom = name.partition("/")
    if not (top.isdigit() and bottom.isdigit()) or top == bottom:
        raise ValueError(f"{name!r} is not an isotope ratio such as 44/40")
    return int(top), int(bottom)


def _mass(element: str, number: int) -> float:
    try:
        return ISOTOPE_MASS[element][number]
    except KeyError:
        known = ", ".join(str(n) for n in ISOTOPE_MASS.get(element, {}))
        has = f" (its isotopes: {known})" if known else ""
        raise ValueError(f"{element} has no stable isotope {number}{has}") from None


def has_ratio(element: str, ratio: str) -> bool:
    """Whether both isotopes of a ratio name (a well-formed one) are isotopes of the element."""
    return set(parse_ratio(ratio)) <= set(ISOTOPE_MASS.get(element, {}))


def _pair(element: str, ratio_a: str, ratio_b: str) -> tuple[float, float, float, float]:
    (num_a, den_a), (num_b, den_b) = parse_ratio(ratio_a), parse_ratio(ratio_b)
    return (
        _mass(element, num_a),
        _mass(element, den_a),
        _mass(element, num_b),
        _mass(element, den_b),
    )


def exponential_factor(element: str, ratio_a: str, ratio_b: str) -> float:
    """k with δa ≈ k·δb under the exponential law: ln(ma/ma') / ln(mb/mb')."""
    num_a, den_a, num_b, den_b = _pair(element, ratio_a, ratio_b)
    return math.log(num_a / den_a) / math.log(num_b / den_b)


def equilibrium_factor(element: str, ratio_a: str, ratio_b: str) -> float:
    """k of the equilibrium (high-temperature) law, for comparison."""
    num_a, den_a, num_b, den_b = _pair(element, ratio_a, ratio_b)
    return (1 / den_a - 1 / num_a) / (1 / den_b - 1 / num_b)


def predicted_delta(delta_b_permil: float, k: float) -> float:
    """δa predicted from δb by a law's k, exactly (not the linear k·δb)."""
    return float(((1 + delta_b_permil / 1000) ** k - 1) * 1000)


def law_factor(element: str, ratio_a: str, ratio_b: str, law: Law) -> float:
    """k of the named law relating δ of ratio_a to δ of ratio_b."""
    if law == "exponential":
        return exponential_factor(element, ratio_a, ratio_b)
    if law == "equilibrium":
        return equilibrium_factor(element, ratio_a, ratio_b)
    raise ValueError(f"{law!r} is not a law: use {' or '.join(LAWS)}")


@dataclass(frozen=True)
class ConvertedDelta:
    """A δ (‰) and its 2SD put on another ratio, with the law and the k that did it."""

    value: float
    two_sd: float | None
    factor: float
    law: Law
    slope: float  # dδ(wanted)/dδ(measured) at the value: what any spread is multiplied by


def convert_delta(
    element: str, value: float, two_sd: float | None, measured: str, wanted: str, law: Law
) -> ConvertedDelta:
    """δ(measured) ± 2SD as δ(wanted) by a mass-dependent law, exactly.

    The spread is carried through the exact map's slope, dδa/dδb = k·(1 + δb/1000)^(k−1),
    so a 2SD becomes that slope times the measured 2SD (first order in the 2SD itself)."""
    k = law_factor(element, wanted, measured, law)
    slope = k * (1 + value / 1000) ** (k - 1)
    spread = None if two_sd is None else float(two_sd * slope)
    return ConvertedDelta(predicted_delta(value, k), spread, k, law, float(slope))


# δ are reported to 0.001 ‰ at the finest (the precision rules), so a departure from the
# law smaller than that cannot be told from the rounding of the values compared.
RESOLUTION_PERMIL = 0.001
# An uncertainty stated by the instrument (internal errors) is taken as known: k = 2 gives
# about 95 % (GUM, JCGM 100:2008, 6.3.3; common practice).
KNOWN_COVERAGE = 2.0


@dataclass(frozen=True)
class Departure:
    """How far a target's δa lies from the δa its δb predicts, and the standard error of that
    residual (‰); ``basis`` says where the error came from."""

    residual: float
    se: float
    basis: Literal["replicates", "internal errors"]
    coverage: float  # the 95 % factor on se: Student's t from replicates, 2 for known errors

    @property
    def significant(self) -> bool:
        """Outside its 95 % interval and beyond the resolution of the values."""
        return abs(self.residual) > max(self.coverage * self.se, RESOLUTION_PERMIL)


def departure_of_replicates(a: Sequence[float], b: Sequence[float], k: float) -> Departure | None:
    """The residual of paired runs (δa and δb of the same run), None under two pairs.

    δa and δb share an isotope (⁴⁴Ca in 44/40 and 44/42), so each run's errors in the two
    are correlated, and treating them as independent overstates the residual's error. Each
    run's own residual rᵢ = δaᵢ − predicted(δbᵢ) carries that covariance with it:
    var(r) = var(a) + k′²·var(b) − 2k′·cov(a, b) to first order, k′ the law's local slope.
    The residual is the mean of rᵢ and its standard error SD(r)/√n; that SD is estimated
    from n runs, so the 95 % interval takes Student's t with n − 1 degrees of freedom.
    """
    if len(a) != len(b):
        raise ValueError("δa and δb must come from the same runs")
    if len(a) < 2:
        return None
    residuals = [x - predicted_delta(y, k) for x, y in zip(a, b, strict=True)]
    se = statistics.stdev(residuals) / math.sqrt(len(residuals))
    return Departure(statistics.fmean(residuals), se, "replicates", coverage_95(len(a) - 1))


def departure_of_one_run(a: float, u_a: float, b: float, u_b: float, k: float) -> Departure:
    """The residual of a single run, its error from the run's internal errors (standard
    uncertainties of δa and δb, first-order propagation).

    One run gives no covariance of δa and δb, so they are taken as independent. Their shared
    isotope correlates them positively, and with k > 0 that correlation lowers the residual's
    variance: taken as independent, the error is if anything too large and the check
    cautious.
    """
    slope = k * (1 + b / 1000) ** (k - 1)  # d predicted(δb) / dδb
    u = math.hypot(u_a, slope * u_b)
    return Departure(a - predicted_delta(b, k), u, "internal errors", KNOWN_COVERAGE)
