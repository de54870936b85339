"""Long-term reproducibility: how well the lab measures a reference material session after
session, and what that means for every result.

Each session that measured a reference material gives one session mean of it (per ratio and
scale). Over many sessions those means scatter by the lab's *long-term* (external)
reproducibility, usually larger than any one session's internal spread: the 2SD of the
session means is the lab's long-term 2SD for that material and ratio.

Two uses, both common practice in isotope labs:

* a control chart: each session's mean against the long-term mean ± 2SD. A session is judged
  against the *other* sessions (its own mean left out, so that one bad session cannot widen
  the limits it is judged by), and only once there are ``MIN_SESSIONS`` others;
* a sample's reported uncertainty is the larger of its internal 2SD and the lab's long-term
  2SD for that ratio and scale: a sample measured three times in one good session is not
  known better than the lab reproduces its reference materials.
"""

from __future__ import annotations

import math
import statistics
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

# Fewer session means than this give too rough a standard deviation to judge a session by
# (common practice asks for many more; three is the least that shows any scatter at all).
MIN_SESSIONS = 3

Basis = Literal["internal", "long-term"]


@dataclass(frozen=True)
class LongTerm:
    """The mean and 2SD of a reference material's session means, and how many there were."""

    mean: float
    two_sd: float
    sessions: int

    def within(self, value: float) -> bool:
        return abs(value - self.mean) <= self.two_sd


def long_term(means: Sequence[float]) -> LongTerm | None:
    """The long-term mean and 2SD (sample SD, n − 1) of session means; None under
    ``MIN_SESSIONS``."""
    if len(means) < MIN_SESSIONS:
        return None
    return LongTerm(statistics.fmean(means), 2 * statistics.stdev(means), len(means))


def judged_by_the_others(means: Sequence[float]) -> list[tuple[LongTerm | None, bool | None]]:
    """For each session mean, the long-term statistics of the *other* sessions and whether
    the mean lies within their mean ± 2SD (None while the others are too few).

    Each leave-one-out mean and SD comes from the whole set's centred sums in constant time
    (a lab's record holds thousands of sessions): with m and SS the mean and the sum of
    squared deviations of all n, leaving xᵢ out gives the mean (n·m − xᵢ)/(n − 1) and the
    sum of squares SS − (xᵢ − m)²·n/(n − 1) (the update of Welford's and Chan's formulas).
    """
    n = len(means)
    if n - 1 < MIN_SESSIONS:
        return [(None, None)] * n
    mean = math.fsum(means) / n
    squares = math.fsum((x - mean) ** 2 for x in means)
    judged: list[tuple[LongTerm | None, bool | None]] = []
    for value in means:
        deviation = value - mean
        others_mean = mean - deviation / (n - 1)
        others_squares = max(0.0, squares - deviation * deviation * n / (n - 1))
        others = LongTerm(others_mean, 2 * math.sqrt(others_squares / (n - 2)), n - 1)
        judged.append((others, others.within(value)))
    return judged


def reported_two_sd(
    internal: float | None, long_term_two_sd: float | None
) -> tuple[float | None, Basis]:
    """The 2SD to report with a result: the larger of its own and the lab's long-term one."""
    if long_term_two_sd is not None and (internal is None or long_term_two_sd > internal):
        return long_term_two_sd, "long-term"
    return internal, "internal"
