"""Delta values, standard-sample bracketing, changes of scale and replicate statistics.

δ = R(sample)/R(standard) − 1, written in per mil (‰ = 10⁻³) — the IUPAC definition
(Coplen 2011, Rapid Commun. Mass Spectrom. 25:2538). Standard–sample bracketing divides
each sample's ratio by the mean of the bracketing standard measured just before and just
after it, cancelling the instrument's drifting mass bias. A change of reference scale is
exact: δ(X/A) = (1 + δ(X/B))·(1 + δ(B/A)) − 1, never the additive approximation.
"""

from __future__ import annotations

import math
import statistics
from collections.abc import Sequence
from dataclasses import dataclass


def delta_permil(sample_ratio: float, standard_ratio: float) -> float:
    if sample_ratio <= 0 or standard_ratio <= 0:
        raise ValueError("isotope ratios must be positive")
    return (sample_ratio / standard_ratio - 1) * 1000


def bracketed_delta(sample: float, before: float, after: float) -> float:
    """δ of a sample against the mean of its two bracketing standards."""
    return delta_permil(sample, (before + after) / 2)


def bracketed_delta_u(
    sample: float, u_sample: float, before: float, u_before: float, after: float, u_after: float
) -> float:
    """Standard uncertainty of a bracketed δ (‰), GUM first-order propagation."""
    mean = (before + after) / 2
    d_sample = 1000 / mean
    d_standard = -1000 * sample / mean**2 / 2  # ∂δ/∂R_before = ∂δ/∂R_after
    return math.sqrt(
        (d_sample * u_sample) ** 2 + (d_standard * u_before) ** 2 + (d_standard * u_after) ** 2
    )


def change_scale(delta_x_on_b: float, delta_b_on_a: float) -> float:
    """δ(X/A) from δ(X/B) and δ(B/A), all in ‰: exact composition of ratios."""
    return ((1 + delta_x_on_b / 1000) * (1 + delta_b_on_a / 1000) - 1) * 1000


def invert(delta_b_on_a: float) -> float:
    """δ(A/B) from δ(B/A), ‰."""
    return (1 / (1 + delta_b_on_a / 1000) - 1) * 1000


@dataclass(frozen=True)
class Replicates:
    """Mean and spread of replicate δ values: SD is the sample standard deviation (n − 1)."""

    mean: float
    sd: float | None
    n: int

    @property
    def two_sd(self) -> float | None:
        return None if self.sd is None else 2 * self.sd

    @property
    def two_se(self) -> float | None:
        return None if self.sd is None else 2 * self.sd / math.sqrt(self.n)


def replicate_stats(values: Sequence[float]) -> Replicates:
    if not values:
        raise ValueError("no replicates")
    mean = statistics.fmean(values)
    sd = statistics.stdev(values) if len(values) > 1 else None
    return Replicates(mean, sd, len(values))


def blank_corrected(
    delta_measured: float, sample_mass: float, delta_blank: float, blank_mass: float
) -> float:
    """δ of the sample alone when a blank of known δ and mass is mixed into it.

    Mass balance of the mixture (common practice for blank corrections):
    δ_measured·(m_s + m_b) = δ_s·m_s + δ_b·m_b, masses of the element in any one unit.
    """
    if sample_mass <= 0:
        raise ValueError("sample element mass must be positive")
    return (delta_measured * (sample_mass + blank_mass) - delta_blank * blank_mass) / sample_mass


# Student's t, two-sided 95 % (the 0.975 quantile), by degrees of freedom: the standard
# table (from memory of any statistics handbook; tests/unit/test_delta.py checks every entry
# by integrating the t density). Beyond 30 degrees of freedom the value for 30 is used,
# which is a little wide (the limit is 1.960) and so errs on the side of fewer flags.
T_975 = (
    12.706,
    4.303,
    3.182,
    2.776,
    2.571,
    2.447,
    2.365,
    2.306,
    2.262,
    2.228,
    2.201,
    2.179,
    2.160,
    2.145,
    2.131,
    2.120,
    2.110,
    2.101,
    2.093,
    2.086,
    2.080,
    2.074,
    2.069,
    2.064,
    2.060,
    2.056,
    2.052,
    2.048,
    2.045,
    2.042,
)


def coverage_95(degrees_of_freedom: int) -> float:
    """The factor that turns a standard error estimated from ``degrees_of_freedom`` + 1
    replicates into a 95 % half-interval (Student's t; 2 is right only for many)."""
    if degrees_of_freedom < 1:
        raise ValueError("a standard error from replicates needs at least two of them")
    return T_975[min(degrees_of_freedom, len(T_975)) - 1]
