"""Figures, floors and the clock they are read with.

A *figure* is one thing tracker does, timed; its *floor* is the least a program could do to
get the same answer from the same data, timed in the same run. Runs alternate figure and
floor and keep each one's best (the least disturbed by other work on the machine), so the
ratio compares like with like. A target is a rule on the figure, its ratio, or both.
"""

from __future__ import annotations

import os
import platform
import sqlite3
import statistics
import time
from collections.abc import Callable
from dataclasses import asdict, dataclass, field
from pathlib import Path
from typing import Any, TypeVar


@dataclass(frozen=True)
class Target:
    """``measured <= most`` and/or ``ratio <= ratio_most``; both must hold when both are set."""

    most: float | None = None
    ratio_most: float | None = None

    def text(self, unit: str) -> str:
        parts = []
        if self.most is not None:
            parts.append(f"≤ {self.most:g} {unit}")
        if self.ratio_most is not None:
            parts.append(f"ratio ≤ {self.ratio_most:g}")
        return " and ".join(parts) or "report only"


@dataclass
class Figure:
    key: str
    title: str
    unit: str
    measured: float
    floor: float
    floor_title: str
    target: Target = field(default_factory=Target)
    higher_is_better: bool = False  # rates (drills per second)
    scale: float | None = None
    notes: list[str] = field(default_factory=list)
    problems: list[str] = field(default_factory=list)  # a cross-check that failed
    compared: str = ""  # what tracker's answer is held against the floor's, or why it is not

    @property
    def ratio(self) -> float:
        if self.higher_is_better:
            return self.floor / self.measured if self.measured else float("inf")
        return self.measured / self.floor if self.floor else float("inf")

    @property
    def met(self) -> bool | None:
        """True/False against the target; None when the figure has none."""
        rules = []
        if self.target.most is not None:
            rules.append(self.measured <= self.target.most)
        if self.target.ratio_most is not None:
            rules.append(self.ratio <= self.target.ratio_most)
        if self.problems:
            return False
        return all(rules) if rules else None

    def as_dict(self) -> dict[str, Any]:
        data = asdict(self)
        data["target"] = self.target.text(self.unit)
        data |= {"ratio": self.ratio, "met": self.met}
        return data


LONG_RUN_S = 20.0  # a run this long is timed once: its own length averages out the noise
Ours = TypeVar("Ours")
Bare = TypeVar("Bare")


def alternated(
    repeat: int,
    ours: Callable[[], Ours],
    floor: Callable[[], Bare],
    seconds: Callable[[Ours], float],
) -> tuple[list[Ours], list[Bare]]:
    """A figure's runs and its floor's, alternating, ``repeat`` times each; only once when
    the first of ours took over ``LONG_RUN_S``. A best of three guards a short figure against
    a moment's noise; a verification of four million signatures lasts minutes, noise averages
    out within it, and three more pairs would add a quarter of an hour to learn little."""
    runs: list[Ours] = []
    floors: list[Bare] = []
    for _ in range(max(repeat, 1)):
        runs.append(ours())
        floors.append(floor())
        if seconds(runs[0]) > LONG_RUN_S:
            break
    return runs, floors


def best_of(repeat: int, *runs: Callable[[], float]) -> list[float]:
    """Run each timing function ``repeat`` times, interleaved; each one's smallest result."""
    results: list[list[float]] = [[] for _ in runs]
    for _ in range(max(repeat, 1)):
        for slot, run in zip(results, runs, strict=True):
            slot.append(run())
    return [min(slot) for slot in results]


def timed(action: Callable[[], Any]) -> float:
    started = time.perf_counter()
    action()
    return time.perf_counter() - started


def settle_writes() -> None:
    """Flush the machine's pending writes (a database just built or copied) before timing.

    Otherwise the kernel writes hundreds of megabytes back while the first figures run, and
    whichever of a figure and its floor commits more waits longer behind them.
    """
    os.sync()


def percentile(values: list[float], share: float) -> float:
    """The nearest-rank percentile (common practice for latency figures)."""
    ordered = sorted(values)
    rank = max(1, int(-(-share * len(ordered) // 1)))  # ceil(share * n)
    return ordered[min(rank, len(ordered)) - 1]


def median(values: list[float]) -> float:
    return statistics.median(values)


def machine() -> dict[str, Any]:
    """What the numbers were measured on (for the README's table)."""
    return {
        "cores": os.cpu_count(),
        "cpu": _cpu_model(),
        "ram_gb": _ram_gb(),
        "python": platform.python_version(),
        "sqlite": sqlite3.sqlite_version,
        "system": f"{platform.system()} {platform.release()}",
        "load": _load(),
    }


def _cpu_model() -> str:
    try:
        for line in Path("/proc/cpuinfo").read_text(encoding="utf-8").splitlines():
            if line.startswith("model name"):
                return line.split(":", 1)[1].strip()
    except OSError:
        pass
    return platform.processor() or "unknown"


def _ram_gb() -> float | None:
    try:
        for line in Path("/proc/meminfo").read_text(encoding="utf-8").splitlines():
            if line.startswith("MemTotal:"):
                return round(int(line.split()[1]) / 1024 / 1024, 1)
    except OSError:
        pass
    return None


def _load() -> list[float] | None:
    try:
        return [round(x, 2) for x in os.getloadavg()]
    except OSError:
        return None
