"""Strontium isotope stratigraphy: which ages a measured ⁸⁷Sr/⁸⁶Sr allows on a reference curve.

The curve is a table of (age in Ma, ⁸⁷Sr/⁸⁶Sr, standard uncertainty), linearly
interpolated. Because seawater ⁸⁷Sr/⁸⁶Sr rose and fell through time, one measured
ratio may match several ages: every interval where the curve lies within the
expanded combined uncertainty (k = 2) of the measurement is returned. A specimen
whose stratigraphic age range overlaps none of them is flagged as possibly reworked
or diagenetically altered — a prompt to look closer, not a verdict.
"""

from __future__ import annotations

import math
from bisect import bisect_right
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from functools import cached_property
from itertools import pairwise

from tracker.domain.spreadsheets import TableError, csv_records

COVERAGE = 2.0
MAX_POINTS = 100_000  # screening walks 64 steps per segment: this bounds the work
_STEPS_PER_SEGMENT = 64
_AGE = ("age_ma", "age")
_RATIO = ("sr87_sr86", "87sr/86sr", "ratio")
_U = ("u", "uncertainty", "u_ratio")


class CurveError(ValueError):
    """A curve file problem, naming the row (1 = header) and the column."""

    def __init__(self, row: int, column: str, reason: str) -> None:
        super().__init__(f"row {row}, column {column}: {reason}")
        self.row, self.column, self.reason = row, column, reason


@dataclass(frozen=True, slots=True)  # a curve holds up to MAX_POINTS of them: no __dict__ each
class CurvePoint:
    age_ma: float
    ratio: float
    u: float


@dataclass(frozen=True)
class Curve:
    points: tuple[CurvePoint, ...]

    @property
    def span(self) -> tuple[float, float]:
        return self.points[0].age_ma, self.points[-1].age_ma

    def at(self, age: float) -> tuple[float, float]:
        """Interpolated (ratio, u) at an age inside the curve (found by bisection)."""
        points = self.points
        if not points[0].age_ma <= age <= points[-1].age_ma:
            raise ValueError(
                f"age {age} Ma is outside the curve ({self.span[0]}–{self.span[1]} Ma)"
            )
        index = min(max(bisect_right(self.ages, age), 1), len(points) - 1)
        left, right = points[index - 1], points[index]
        share = (age - left.age_ma) / (right.age_ma - left.age_ma)
        return (
            left.ratio + share * (right.ratio - left.ratio),
            left.u + share * (right.u - left.u),
        )

    @cached_property
    def ages(self) -> list[float]:
        return [p.age_ma for p in self.points]

    def intervals(self, ratio: float, u: float, k: float = COVERAGE) -> list[tuple[float, float]]:
        """Age intervals (Ma, young to old) where the curve agrees with ratio ± k·u_combined."""

        def misfit(age: float) -> float:
            value, u_curve = self.at(age)
            return abs(value - ratio) - k * math.hypot(u, u_curve)

        found: list[tuple[float, float]] = []
        start: float | None = None
        ages = self._grid()
        previous = ages[0]
        if misfit(previous) <= 0:
            start = previous
        for age in ages[1:]:
            inside = misfit(age) <= 0
            if inside and start is None:
                start = _crossing(misfit, previous, age)
            elif not inside and start is not None:
                found.append((start, _crossing(misfit, previous, age)))
                start = None
            previous = age
        if start is not None:
            found.append((start, ages[-1]))
        return found

    def expected(
        self, youngest: float, oldest: float, k: float = COVERAGE
    ) -> tuple[float, float] | None:
        """The ⁸⁷Sr/⁸⁶Sr (lowest, highest) the curve expects, ± k·u, anywhere in an age range:
        what a specimen of that stated age should measure, for a person to set beside its
        measured ratio. Only the part of the range the curve covers counts; None when the
        range lies wholly outside the curve.

        Ratio and uncertainty are both linear between points, so the band's extremes lie at
        the range's ends or at the curve's points inside it.
        """
        start, end = max(youngest, self.span[0]), min(oldest, self.span[1])
        if start > end:
            return None
        ages = [start, *(a for a in self.ages if start < a < end), end]
        band = [self.at(age) for age in ages]
        return min(r - k * u for r, u in band), max(r + k * u for r, u in band)

    def _grid(self) -> list[float]:
        ages = [self.points[0].age_ma]
        for left, right in pairwise(self.points):
            step = (right.age_ma - left.age_ma) / _STEPS_PER_SEGMENT
            ages += [left.age_ma + step * i for i in range(1, _STEPS_PER_SEGMENT)]
            ages.append(right.age_ma)  # exactly: left + 64·step can round past the curve's end
        return ages


def _crossing(misfit: Callable[[float], float], low: float, high: float) -> float:
    """The age between two grid ages where the misfit changes sign (bisection)."""
    sign_low = misfit(low) <= 0
    for _ in range(50):
        middle = (low + high) / 2
        if (misfit(middle) <= 0) == sign_low:
            low = middle
        else:
            high = middle
    return (low + high) / 2


def overlaps(intervals: list[tuple[float, float]], youngest: float, oldest: float) -> bool:
    return any(start <= oldest and end >= youngest for start, end in intervals)


def parse_curve_csv(text: str) -> Curve:
    """Read a curve: a header naming age_ma, 87sr/86sr (or ratio) and u, then rows by age.

    Rows are numbered as lines of the file (comment lines starting with # included), so an
    error points at the line a person sees in an editor.
    """
    kept = (
        (n, r)
        for n, r in _records(text)
        if r and any(c.strip() for c in r) and not r[0].lstrip().startswith("#")
    )
    first = next(kept, None)
    if first is None:
        raise CurveError(1, "header", "the file is empty")
    header_line, raw_header = first
    header = [cell.strip().lower() for cell in raw_header]
    columns = {
        name: _find(header, options, header_line)
        for name, options in (("age_ma", _AGE), ("ratio", _RATIO), ("u", _U))
    }
    points: list[CurvePoint] = []
    last = header_line
    for number, row in kept:
        values = {
            name: _number(row, index, number, header[index]) for name, index in columns.items()
        }
        point = CurvePoint(values["age_ma"], values["ratio"], values["u"])
        _check(point, points[-1] if points else None, number, header, columns)
        points.append(point)
        last = number
    if len(points) < 2:
        raise CurveError(last, "age_ma", "a curve needs at least two points")
    return Curve(tuple(points))


def _records(text: str) -> Iterator[tuple[int, list[str]]]:
    """The file's records as they are read (only the points are kept), at most MAX_POINTS."""
    try:
        for count, record in enumerate(csv_records(text), start=1):
            if count > MAX_POINTS:
                raise CurveError(
                    MAX_POINTS + 1, "age_ma", f"a curve of more than {MAX_POINTS} rows"
                )
            yield record
    except TableError as exc:
        raise CurveError(exc.row, exc.column, exc.reason) from None


def _find(header: list[str], options: tuple[str, ...], line: int) -> int:
    for option in options:
        if option in header:
            return header.index(option)
    raise CurveError(line, options[0], f"no column named {' or '.join(options)}")


def _number(row: list[str], index: int, number: int, column: str) -> float:
    if index >= len(row) or not row[index].strip():
        raise CurveError(number, column, "is empty (a gap in the curve)")
    try:
        value = float(row[index])
    except ValueError:
        raise CurveError(number, column, f"{row[index]!r} is not a number") from None
    if not math.isfinite(value):
        raise CurveError(number, column, f"{row[index]!r} is not a finite number")
    return value


def _check(
    point: CurvePoint,
    before: CurvePoint | None,
    number: int,
    header: list[str],
    columns: dict[str, int],
) -> None:
    if point.ratio <= 0:
        raise CurveError(number, header[columns["ratio"]], "a ratio must be positive")
    if point.u < 0:
        raise CurveError(number, header[columns["u"]], "an uncertainty cannot be negative")
    if before is not None and point.age_ma <= before.age_ma:
        raise CurveError(
            number,
            header[columns["age_ma"]],
            f"{point.age_ma} is not older than the row above ({before.age_ma}); "
            "sort the curve by increasing age",
        )
