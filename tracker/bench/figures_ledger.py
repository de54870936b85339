"""Ledger verification of the whole chain, time and peak memory, each in a fresh process.

Both the service and the floor run in child interpreters so that neither inherits the
other's caches, and so the operating system can say how much memory each needed at most
(``ru_maxrss`` of the finished child, which includes the interpreter itself).
"""

from __future__ import annotations

import json
import subprocess
import sys
import tempfile
from dataclasses import dataclass
from pathlib import Path

from tracker.bench.measure import Figure, Target
from tracker.db.engine import sqlite_path


@dataclass(frozen=True)
class ChildRun:
    seconds: float
    peak_mb: float
    events: int
    ok: bool
    head: str


def run_child(*args: str) -> ChildRun:
    """Run ``python -m tracker.bench.probe ARGS``; its answer, with the peak memory it saw."""
    with tempfile.TemporaryFile() as errors:
        process = subprocess.run(
            [sys.executable, "-m", "tracker.bench.probe", *args],
            stdout=subprocess.PIPE,
            stderr=errors,
            check=False,
        )
        if process.returncode:
            errors.seek(0)
            last = errors.read().decode("utf-8", "replace").strip().splitlines()[-1:]
            raise RuntimeError(f"probe {args[0]} failed: {last}")
    answer = json.loads(process.stdout.decode("utf-8").strip().splitlines()[-1])
    return ChildRun(
        answer["seconds"], answer["peak_mb"], answer["events"], answer["ok"], answer["head"]
    )


def verify_figures(target: str, repeat: int) -> list[Figure]:
    path = sqlite_path(target) if "://" in target else Path(target)
    if path is None:
        raise ValueError("the verify floor reads a SQLite file")
    runs: list[ChildRun] = []
    floors: list[ChildRun] = []
    for _ in range(max(repeat, 1)):
        runs.append(run_child("verify", str(path)))
        floors.append(run_child("verify-floor", str(path)))
    best, bare = min(runs, key=lambda r: r.seconds), min(floors, key=lambda r: r.seconds)
    events = best.events
    timing = Figure(
        "verify",
        f"ledger verify of {events:,} events",
        "s",
        best.seconds,
        bare.seconds,
        "bare loop: sqlite3 rows hashed with hashlib",
        Target(ratio_most=1.5),
    )
    memory = Figure(
        "verify_memory",
        "ledger verify, peak memory (whole process, VmHWM)",
        "MB",
        max(r.peak_mb for r in runs),
        max(f.peak_mb for f in floors),
        "the bare loop's process",
        Target(most=200.0),
    )
    for run in (*runs, *floors):
        if not run.ok or run.head != best.head or run.events != events:
            timing.problems.append(f"verdicts differ: {run}")
            break
    timing.notes.append(f"head {best.head[:16]}…, intact: {best.ok}")
    return [timing, memory]
