"""Strontium curve reading and permissible-age intervals, against an independent dense scan."""

from __future__ import annotations

import math
from itertools import pairwise

import pytest

from tracker.domain.srcurve import CurveError, overlaps, parse_curve_csv

# An invented, non-monotonic curve (not real seawater data).
CURVE = """# invented for tests
age_ma,87sr/86sr,u
0,0.70917,0.00001
10,0.70880,0.00001
20,0.70800,0.00002
30,0.70780,0.00002
40,0.70820,0.00002
"""


def scan(text: str, ratio: float, u: float, step: float = 0.0005) -> list[tuple[float, float]]:
    """Independent check: walk the ages in small steps with plain linear interpolation."""
    rows = [line.split(",") for line in text.splitlines()[2:]]
    points = [(float(a), float(r), float(s)) for a, r, s in rows]
    inside, found, start = False, [], 0.0
    age = points[0][0]
    while age <= points[-1][0] + 1e-12:
        for (a0, r0, u0), (a1, r1, u1) in pairwise(points):
            if a0 <= age <= a1:
                t = (age - a0) / (a1 - a0)
                value, u_curve = r0 + t * (r1 - r0), u0 + t * (u1 - u0)
                break
        ok = abs(value - ratio) <= 2 * math.hypot(u, u_curve)
        if ok and not inside:
            inside, start = True, age
        if not ok and inside:
            inside = False
            found.append((start, age - step))
        age += step
    if inside:
        found.append((start, points[-1][0]))
    return found


@pytest.mark.parametrize(
    ("ratio", "count"), [(0.70810, 2), (0.70790, 2), (0.70900, 1), (0.70600, 0)]
)
def test_intervals_match_a_dense_scan(ratio: float, count: int) -> None:
    curve = parse_curve_csv(CURVE)
    intervals = curve.intervals(ratio, 0.00001)
    expected = scan(CURVE, ratio, 0.00001)
    assert len(intervals) == len(expected) == count
    for (a, b), (c, d) in zip(intervals, expected, strict=True):
        assert a == pytest.approx(c, abs=0.002) and b == pytest.approx(d, abs=0.002)


def test_interpolation_and_overlap() -> None:
    curve = parse_curve_csv(CURVE)
    value, u = curve.at(25)
    assert value == pytest.approx((0.70800 + 0.70780) / 2) and u == pytest.approx(0.00002)
    assert overlaps([(18.0, 19.5)], 19.0, 22.0)
    assert not overlaps([(18.0, 19.5), (36.0, 38.0)], 25.0, 30.0)
    with pytest.raises(ValueError, match="outside the curve"):
        curve.at(41)


@pytest.mark.parametrize(
    ("text", "row", "column", "fragment"),
    [
        ("age_ma,87sr/86sr,u\n0,0.709,0.00001\n0,0.708,0.00001\n", 3, "age_ma", "not older"),
        ("age_ma,87sr/86sr,u\n5,0.709,0.00001\n2,0.708,0.00001\n", 3, "age_ma", "sort"),
        ("age_ma,87sr/86sr,u\n0,0.709,0.00001\n5,,0.00001\n", 3, "87sr/86sr", "gap"),
        ("age_ma,87sr/86sr,u\n0,0.709,abc\n5,0.708,0.00001\n", 2, "u", "not a number"),
        ("age_ma,87sr/86sr,u\n0,-0.709,0.00001\n5,0.708,0.00001\n", 2, "87sr/86sr", "positive"),
        ("age,ratio\n0,0.709\n", 1, "u", "no column"),
        ("age_ma,87sr/86sr,u\n0,0.709,0.00001\n", 2, "age_ma", "at least two"),
    ],
)
def test_bad_curves_name_row_and_column(text: str, row: int, column: str, fragment: str) -> None:
    with pytest.raises(CurveError) as caught:
        parse_curve_csv(text)
    assert (caught.value.row, caught.value.column) == (row, column)
    assert fragment in caught.value.reason


def test_a_flat_curve_whose_ends_do_not_divide_evenly_spans_to_its_last_age() -> None:
    """Found by hypothesis: 1.4445674446407963 + 64 steps rounded past 257.8365392930713."""
    curve = parse_curve_csv(
        "age_ma,87sr/86sr,u\n1.4445674446407963,0.703125,0.0\n257.8365392930713,0.703125,0.0\n"
    )
    assert curve.intervals(0.703125, 0.0) == [(1.4445674446407963, 257.8365392930713)]
    assert curve.intervals(0.71875, 0.0) == []


def band_by_scan(text: str, youngest: float, oldest: float) -> tuple[float, float]:
    """Independent check: the curve's ratio ± 2u at every 0.001 Ma of the range, by hand."""
    rows = [line.split(",") for line in text.splitlines()[2:]]
    points = [(float(a), float(r), float(s)) for a, r, s in rows]
    low, high = math.inf, -math.inf
    steps = max(round((oldest - youngest) / 0.001), 1)
    for i in range(steps + 1):
        age = youngest + (oldest - youngest) * i / steps
        for (a0, r0, u0), (a1, r1, u1) in pairwise(points):
            if a0 <= age <= a1:
                t = (age - a0) / (a1 - a0)
                value, u_curve = r0 + t * (r1 - r0), u0 + t * (u1 - u0)
                break
        low, high = min(low, value - 2 * u_curve), max(high, value + 2 * u_curve)
    return low, high


@pytest.mark.parametrize(
    ("youngest", "oldest"), [(12.0, 17.0), (15.0, 35.0), (26.5, 26.5), (0.0, 40.0), (33.3, 38.1)]
)
def test_expected_ratio_over_an_age_range_matches_a_dense_scan(
    youngest: float, oldest: float
) -> None:
    band = parse_curve_csv(CURVE).expected(youngest, oldest)
    assert band is not None
    low, high = band_by_scan(CURVE, youngest, oldest)
    assert band[0] == pytest.approx(low, abs=1e-9) and band[1] == pytest.approx(high, abs=1e-9)


def test_expected_ratio_counts_only_the_ages_the_curve_covers() -> None:
    curve = parse_curve_csv(CURVE)
    assert curve.expected(41.0, 50.0) is None  # wholly older than the curve
    assert curve.expected(35.0, 60.0) == pytest.approx(band_by_scan(CURVE, 35.0, 40.0))
