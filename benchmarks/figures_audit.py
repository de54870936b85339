"""The state audit of the whole lab (the ledger replayed, every row compared), time and peak
memory, each in a fresh process beside a floor that computes the same answer by hand."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from benchmarks import children
from benchmarks.measure import Figure, Target, alternated
from tracker.db.engine import sqlite_path


@dataclass(frozen=True)
class AuditRun:
    seconds: float
    peak_mb: float
    events: int
    rows: int
    discrepancies: int

    def answer(self) -> tuple[int, int, int]:
        return self.events, self.rows, self.discrepancies


def run_child(what: str, path: Path) -> AuditRun:
    """``python -m benchmarks.audit_probe WHAT PATH``: its answer and peak memory."""
    answer = children.probe_answer("audit_probe", what, str(path))
    return AuditRun(
        answer["seconds"],
        answer["peak_mb"],
        answer["events"],
        answer["rows"],
        answer["discrepancies"],
    )


def audit_figures(target: str, repeat: int) -> list[Figure]:
    path = sqlite_path(target) if "://" in target else Path(target)
    if path is None:
        raise ValueError("the audit floor reads a SQLite file")
    runs, floors = alternated(
        repeat,
        lambda: run_child("audit", path),
        lambda: run_child("audit-floor", path),
        lambda run: run.seconds,
    )
    best, bare = min(runs, key=lambda r: r.seconds), min(floors, key=lambda r: r.seconds)
    timing = Figure(
        "audit",
        f"state audit: {best.events:,} events replayed, {best.rows:,} rows compared",
        "s",
        best.seconds,
        bare.seconds,
        "bare loop: sqlite3 rows hashed, json payloads replayed into dictionaries, "
        "rows compared by hand",
        Target(ratio_most=2.0),
    )
    memory = Figure(
        "audit_memory",
        "state audit, peak memory (whole process, VmHWM)",
        "MB",
        max(r.peak_mb for r in runs),
        max(f.peak_mb for f in floors),
        "the bare loop's process",
        Target(),
    )
    for run in (*runs, *floors):
        if run.answer() != best.answer():
            timing.problems.append(f"answers differ: {run}")
            break
    timing.notes.append(f"{best.discrepancies} discrepancies")
    timing.compared = memory.compared = "the same events, rows and discrepancies"
    return [timing, memory]
