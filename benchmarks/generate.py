"""Building synthetic databases, and keeping them: a scale-1 lab takes minutes to write.

``build`` runs the plan into a new database with either executor. ``cached`` answers a
scale with a SQLite file in the cache folder, named by the scale, the generator version
and the schema revision — any of them changing means a new file — built (by the bulk
executor) only when it is missing. A sidecar ``.json`` keeps what the build reported.
"""

from __future__ import annotations

import json
import subprocess
import sys
from collections.abc import Callable, Iterator
from dataclasses import asdict, dataclass, replace
from pathlib import Path
from time import perf_counter
from typing import Literal

from sqlalchemy import func, select

from benchmarks import children
from benchmarks.bulk import BulkExecutor
from benchmarks.plan import Step, plan_steps
from benchmarks.replay import new_database, run_services
from benchmarks.shape import GENERATOR_VERSION, SEED, START, Shape, shape_for
from tracker.db import migrate
from tracker.db.database import Database
from tracker.demo import StepClock
from tracker.domain.models import CustodyEvent

Executor = Literal["bulk", "services"]
Progress = Callable[[int], None]  # steps done so far


@dataclass(frozen=True)
class Built:
    """What a build (or the cache) produced."""

    target: str
    scale: float
    executor: str
    steps: int
    events: int
    head_hash: str
    seconds: float
    reused: bool = False


def _counted(steps: Iterator[Step], progress: Progress | None, every: int) -> Iterator[Step]:
    for n, step in enumerate(steps, start=1):
        yield step
        if progress is not None and n % every == 0:
            progress(n)


def build(
    target: str | Path,
    shape: Shape | float,
    executor: Executor = "bulk",
    *,
    seed: int = SEED,
    progress: Progress | None = None,
) -> Built:
    """Write the plan for ``shape`` (or a scale) into a new, empty database at ``target``."""
    chosen = shape if isinstance(shape, Shape) else shape_for(shape, seed)
    started = perf_counter()
    clock = StepClock(START)
    db = new_database(target, clock)
    try:
        steps = _counted(plan_steps(chosen, seed), progress, 20_000)
        if executor == "bulk":
            count = BulkExecutor(db, clock).run(steps).steps
        else:
            count = run_services(db, clock, steps)
        events, head = ledger_head(db)
    finally:
        db.close()
    return Built(str(target), chosen.scale, executor, count, events, head, perf_counter() - started)


def ledger_head(db: Database) -> tuple[int, str]:
    with db.read_session() as session:
        row = session.execute(
            select(func.count(), func.max(CustodyEvent.seq)).select_from(CustodyEvent)
        ).one()
        head = session.scalar(select(CustodyEvent.hash).where(CustodyEvent.seq == row[1]))
    return int(row[0]), head or ""


def cache_path(folder: Path, scale: float) -> Path:
    return folder / f"bench-scale{scale:g}-gen{GENERATOR_VERSION}-{migrate.HEAD}.sqlite"


def cached(
    folder: Path, scale: float, *, rebuild: bool = False, progress: Progress | None = None
) -> Built:
    """The cached database for ``scale``, built first when missing (or when asked to)."""
    path = cache_path(folder, scale)
    sidecar = path.with_name(path.name + ".json")
    if path.exists() and sidecar.exists() and not rebuild:
        known = json.loads(sidecar.read_text(encoding="utf-8"))
        return Built(**{**known, "target": str(path), "reused": True})
    folder.mkdir(parents=True, exist_ok=True)
    partial = path.with_name(path.name + ".partial")
    for stale in (partial, path):
        remove_sqlite(stale)
    built = build(partial, scale, "bulk", progress=progress)
    partial.replace(path)
    result = Built(**{**asdict(built), "target": str(path)})
    sidecar.write_text(json.dumps(asdict(result), indent=2) + "\n", encoding="utf-8")
    return result


def cached_apart(folder: Path, scale: float, progress: Progress | None = None) -> Built:
    """:func:`cached`, but a missing database is built by a child interpreter.

    Building turns a million objects over; the process that did it was left slower to
    allocate, and the figures timed in it afterwards suffered (a fresh scale-1 build put the
    manifest import at 3.5 × its floor, 2.6 × in a process that had not built it).
    """
    path = cache_path(folder, scale)
    missing = not (path.exists() and path.with_name(path.name + ".json").exists())
    if missing:
        command = children.command("generate", str(folder), repr(scale))
        child = subprocess.Popen(
            command, stdout=subprocess.PIPE, text=True, env=children.environment()
        )
        assert child.stdout is not None
        for line in child.stdout:  # one line per progress report: steps written so far
            if progress is not None and line.strip().isdigit():
                progress(int(line))
        if child.wait():
            raise RuntimeError(
                f"building the scale {scale:g} database failed "
                f"(exit {child.returncode}; its error is above)"
            )
    return replace(cached(folder, scale), reused=not missing)


def _main(argv: list[str]) -> int:
    """``python -m benchmarks.generate FOLDER SCALE``: build into the cache, report steps."""
    cached(Path(argv[1]), float(argv[2]), progress=lambda n: print(n, flush=True))
    return 0


def remove_sqlite(path: Path) -> None:
    """A SQLite file and its WAL companions."""
    for suffix in ("", "-wal", "-shm"):
        Path(str(path) + suffix).unlink(missing_ok=True)


if __name__ == "__main__":
    sys.exit(_main(sys.argv))
