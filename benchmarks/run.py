"""The benchmark run: every figure next to its floor, at one scale or several, on each backend.

SQLite figures run on the cached database of each scale (built first when missing);
PostgreSQL figures run on the server ``--pg-url`` names, or on a database built for the run
on a throwaway cluster when ``--pg-cluster`` asks for one. A figure that cannot run here (no
server named, no PostgreSQL) is reported as skipped with the reason — never left out.
Several scales add a growth table.
"""

from __future__ import annotations

import math
import tempfile
from collections.abc import Callable
from dataclasses import asdict, dataclass, field
from pathlib import Path
from typing import Any, Literal

from benchmarks import (
    figures_audit,
    figures_ledger,
    figures_manifest,
    figures_read,
    figures_ui,
)
from benchmarks.generate import Built, cached_apart
from benchmarks.measure import Figure, machine, settle_writes
from benchmarks.plan import bench_keyring
from benchmarks.shape import END
from tracker.db.database import Database, open_database
from tracker.demo import StepClock
from tracker.domain.errors import TrackerError

Backend = Literal["sqlite", "postgresql", "both"]
SQLITE_FIGURES = (
    "reconcile",
    "verify",
    "signing",
    "audit",
    "manifest",
    "lookup",
    "lineage",
    "labels",
    "tui",
    "cold",
)
PG_FIGURES = ("pg", "cold")  # "pg": reconcile and drills; "cold": the whole-command table
LINEAR = 1.15  # growth exponents up to this count as linear (timings on a busy 2-core machine)


@dataclass
class Options:
    scales: list[float]
    backend: Backend = "both"
    pg_url: str | None = None
    pg_cluster: bool = False
    repeat: int = 3
    cache: Path = Path()
    only: tuple[str, ...] = ()
    say: Callable[[str], None] = lambda _: None


@dataclass
class Skipped:
    key: str
    scale: float
    reason: str


@dataclass
class Growth:
    key: str
    title: str
    unit: str
    values: dict[float, float]
    exponent: float

    @property
    def verdict(self) -> str:
        return "linear or better" if self.exponent <= LINEAR else "worse than linear"


@dataclass
class Report:
    machine: dict[str, Any]
    scales: list[float]
    figures: list[Figure] = field(default_factory=list)
    skipped: list[Skipped] = field(default_factory=list)
    builds: list[Built] = field(default_factory=list)

    @property
    def all_met(self) -> bool:
        return all(f.met is not False for f in self.figures)

    def growth(self) -> list[Growth]:
        return growth_of(self.figures)

    def as_dict(self) -> dict[str, Any]:
        return {
            "machine": self.machine,
            "scales": self.scales,
            "figures": [f.as_dict() for f in self.figures],
            "skipped": [asdict(s) for s in self.skipped],
            "growth": [
                asdict(g)
                | {"verdict": g.verdict, "values": {f"{k:g}": v for k, v in g.values.items()}}
                for g in self.growth()
            ],
            "builds": [asdict(b) for b in self.builds],
            "all_met": self.all_met,
        }


def growth_of(figures: list[Figure]) -> list[Growth]:
    """Per figure measured at two scales or more: how it grows from the smallest to the largest.

    The exponent is log(t_large / t_small) / log(s_large / s_small): 1 is linear, 0 is flat.
    """
    by_key: dict[str, list[Figure]] = {}
    for figure in figures:
        if figure.scale is not None and not figure.higher_is_better:
            by_key.setdefault(figure.key, []).append(figure)
    lines = []
    for key, found in by_key.items():
        values = {f.scale: f.measured for f in found if f.scale is not None}
        if len(values) < 2:
            continue
        small, large = min(values), max(values)
        ratio = values[large] / values[small] if values[small] > 0 else math.inf
        exponent = math.log(ratio) / math.log(large / small) if ratio > 0 else 0.0
        lines.append(Growth(key, found[-1].title, found[-1].unit, values, exponent))
    return lines


def run(options: Options) -> Report:
    report = Report(machine(), options.scales)
    for scale in options.scales:
        if options.backend in ("sqlite", "both"):
            _sqlite(options, scale, report)
    for scale in _pg_scales(options):
        _postgresql(options, scale, report)
    report.machine["load_end"] = machine()["load"]  # the start's is read with the machine
    return report


def _pg_scales(options: Options) -> list[float]:
    if not any(_wanted(options, key) for key in PG_FIGURES):
        return []
    if options.backend == "postgresql":
        return options.scales
    if options.backend == "both":
        return [1.0] if 1.0 in options.scales else options.scales[-1:]
    return []


def _wanted(options: Options, key: str) -> bool:
    return not options.only or key in options.only


def _sqlite(options: Options, scale: float, report: Report) -> None:
    options.say(f"scale {scale:g}: database")
    built = cached_apart(
        options.cache, scale, progress=lambda n: options.say(f"  {n:,} steps written")
    )
    settle_writes()  # a database just built leaves its pages to be written: not during a figure
    report.builds.append(built)
    db = open_database(built.target, clock=StepClock(END), upgrade=False)
    db.keyring = bench_keyring()  # the synthetic operators sign
    steps: dict[str, Callable[[], list[Figure]]] = {
        "reconcile": lambda: [figures_read.reconcile_figure(db, options.repeat)],
        "verify": lambda: figures_ledger.verify_figures(built.target, options.repeat),
        "signing": lambda: [figures_ledger.signing_figure(db, options.repeat)],
        "audit": lambda: figures_audit.audit_figures(built.target, options.repeat),
        "manifest": lambda: _manifest(built, options),
        "lookup": lambda: [figures_read.lookup_figure(db)],
        "lineage": lambda: [figures_read.lineage_figure(db)],
        "labels": lambda: [_labels(db, options.repeat)],
        "tui": lambda: [figures_ui.cold_start_figure(built.target, options.repeat)],
        "cold": lambda: _cold(db, built, options),
    }
    try:
        for key in SQLITE_FIGURES:
            if _wanted(options, key):
                options.say(f"scale {scale:g}: {key}")
                for figure in steps[key]():
                    figure.scale = scale
                    report.figures.append(figure)
    finally:
        db.close()


def _manifest(built: Built, options: Options) -> list[Figure]:
    with tempfile.TemporaryDirectory(prefix="tracker-bench-") as work:
        return [figures_manifest.manifest_figure(Path(built.target), Path(work), options.repeat)]


def _cold(db: Database, built: Built, options: Options) -> list[Figure]:
    from benchmarks.figures_cold import cold_figures, sqlite_copy

    with tempfile.TemporaryDirectory(prefix="tracker-bench-cold-") as work:
        copy = sqlite_copy(built.target, Path(work, "writes.sqlite"))
        return cold_figures(db, built.target, copy, Path(work), options.repeat)


def _labels(db: Any, repeat: int) -> Figure:
    from benchmarks.figures_labels import labels_figure  # loads reportlab and qrcode

    return labels_figure(db, repeat)


def _postgresql(options: Options, scale: float, report: Report) -> None:
    from benchmarks import figures_pg

    steps = {"pg": figures_pg.postgresql_figures, "cold": figures_pg.cold_figures}
    wanted = [key for key in PG_FIGURES if _wanted(options, key)]
    done = 0
    options.say(f"scale {scale:g}: PostgreSQL")
    try:
        with figures_pg.server(options.pg_url, options.pg_cluster) as server:
            url, built = figures_pg.built_database(
                server,
                scale,
                bool(options.pg_url),
                lambda n: options.say(f"  {n:,} steps written to PostgreSQL"),
            )
            if built is not None:
                report.builds.append(built)
            for step in wanted:
                options.say(f"scale {scale:g}: PostgreSQL {step}")
                for figure in steps[step](url, scale, options.repeat):
                    figure.scale = scale
                    report.figures.append(figure)
                done += 1
    except (TrackerError, ImportError) as error:
        reason = error.one_line() if isinstance(error, TrackerError) else str(error)
        for step in wanted[done:]:  # every step the failure left unmeasured, with its reason
            report.skipped.append(Skipped("pg" if step == "pg" else f"pg_{step}", scale, reason))
