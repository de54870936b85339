"""The long-term statistics of a reference material's session means, against numpy."""

from __future__ import annotations

from datetime import date

import numpy
import pytest
from hypothesis import given
from hypothesis import strategies as st

from tracker.domain.reproducibility import (
    MIN_SESSIONS,
    judged_by_the_others,
    long_term,
    reported_two_sd,
)
from tracker.present.control import strip
from tracker.services.instrument.reproducibility import ControlPoint

MEANS = [0.52, 0.47, 0.55, 0.50, 0.49, 0.53]  # invented session means of one material, ‰


def test_the_long_term_mean_and_2sd_are_those_of_the_session_means() -> None:
    found = long_term(MEANS)
    assert found is not None and found.sessions == len(MEANS)
    # numpy as the reference: mean, and twice the sample standard deviation (ddof = 1)
    assert found.mean == pytest.approx(float(numpy.mean(MEANS)), abs=1e-12)
    assert found.two_sd == pytest.approx(2 * float(numpy.std(MEANS, ddof=1)), abs=1e-12)
    assert long_term(MEANS[: MIN_SESSIONS - 1]) is None


def test_each_session_is_judged_by_the_others_alone() -> None:
    means = [*MEANS, 0.62]  # the last session's material came out high
    judged = judged_by_the_others(means)
    assert [within for _, within in judged] == [True] * len(MEANS) + [False]
    others, _ = judged[-1]
    assert others is not None
    assert others.mean == pytest.approx(float(numpy.mean(MEANS)), abs=1e-12)
    # left in, the high session would have widened its own limits: judged by all seven,
    # 0.62 lies within their mean ± 2SD
    everyone = long_term(means)
    assert everyone is not None and everyone.within(0.62)


@given(st.lists(st.floats(-5, 5, allow_nan=False), min_size=MIN_SESSIONS + 1, max_size=40))
def test_each_leave_one_out_matches_numpy_on_the_others(means: list[float]) -> None:
    # numpy as the reference: mean and 2·SD (ddof = 1) of the list without that session
    for index, (others, within) in enumerate(judged_by_the_others(means)):
        rest = means[:index] + means[index + 1 :]
        assert others is not None and others.sessions == len(rest)
        assert others.mean == pytest.approx(float(numpy.mean(rest)), abs=1e-9)
        assert others.two_sd == pytest.approx(2 * float(numpy.std(rest, ddof=1)), abs=1e-6)
        assert within is (abs(means[index] - others.mean) <= others.two_sd)


def test_too_few_other_sessions_judge_nothing() -> None:
    judged = judged_by_the_others(MEANS[:MIN_SESSIONS])
    assert [within for _, within in judged] == [None] * MIN_SESSIONS


def test_a_result_is_reported_with_the_larger_of_its_own_and_the_lab_s_2sd() -> None:
    assert reported_two_sd(0.05, 0.12) == (0.12, "long-term")
    assert reported_two_sd(0.20, 0.12) == (0.20, "internal")
    assert reported_two_sd(None, 0.12) == (0.12, "long-term")  # a single run
    assert reported_two_sd(0.05, None) == (0.05, "internal")  # no record yet


def point(value: float, mean: float | None, two_sd: float | None) -> ControlPoint:
    return ControlPoint(
        session="IS-00001-A",
        day=date(2026, 11, 24),
        value=value,
        two_sd=None,
        n=1,
        others_mean=mean,
        others_two_sd=two_sd,
        within=None,
    )


def test_the_strip_puts_the_session_between_the_limits_in_proportion() -> None:
    # limits at a quarter from each end; 2SD spans five characters
    assert strip(point(0.50, 0.50, 0.10)) == "·····[····●····]·····"
    assert strip(point(0.60, 0.50, 0.10)) == "·····[·········●·····"  # on the upper limit
    assert strip(point(0.42, 0.50, 0.10)) == "·····[●········]·····"
    assert strip(point(2.00, 0.50, 0.10)) == "·····[·········]····▶"
    assert strip(point(-2.0, 0.50, 0.10)) == "◀····[·········]·····"
    assert strip(point(0.50, None, None)) == ""  # not judged: nothing to draw against
