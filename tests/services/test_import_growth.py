"""Every importer is linear in its rows: time at 16× the rows stays near 16× the time.

Each importer runs at three sizes (1,000, 4,000 and 16,000 rows; batch sheets 600, 2,400
and 9,600 columns, as a batch holds at most 10,000) on a fresh target each time. Only the
service call is timed — this process's CPU time, best of a few — and nothing is asserted
about seconds: only how the time grows. Linear work grows 4× from 4k to 16k rows and 16×
from 1k; quadratic work 16× and 256×. The bounds leave room for a busy machine and for
fixed costs, which make small files relatively slower, and still fail work that grows
with the square (the batch sheet as it was: 1,000 rows 1.8 s, 2,000 rows 5.5 s; the
instrument import's bracketing check, which scanned the standards once per sample)."""

from __future__ import annotations

import gc
import time
from collections.abc import Callable
from itertools import count

import pytest

from tests import factories as make
from tests import lab_files
from tracker.db.database import Database
from tracker.services.bench import batch_sheet, chemistry
from tracker.services.instrument import reduction, screening, sessions
from tracker.services.loans import manifests

pytestmark = pytest.mark.slow
SIZES = (1000, 4000, 16_000)
SHEET_SIZES = (600, 2400, 9600)
REPEATS = (3, 2, 2)  # best of: small files are noisier
# 4× the rows: linear 4×, quadratic 16×; 16× the rows: linear 16×, quadratic 256×.
MOST_FROM_MIDDLE, MOST_FROM_SMALL = 6.4, 40.0
RATIOS = {"44/40": "r4440", "44/42": "r4442"}
_unique = count(1)


def best_time(run: Callable[[int], float], size: int, repeats: int) -> float:
    return min(run(size) for _ in range(repeats))


def assert_linear(run: Callable[[int], float], sizes: tuple[int, int, int]) -> None:
    small, middle, large = (
        best_time(run, size, repeats) for size, repeats in zip(sizes, REPEATS, strict=True)
    )
    said = f"{sizes[0]}: {small:.3f} s, {sizes[1]}: {middle:.3f} s, {sizes[2]}: {large:.3f} s"
    assert large / middle < MOST_FROM_MIDDLE, said
    assert large / small < MOST_FROM_SMALL, said


def timed(call: Callable[[], object]) -> float:
    """The CPU time of this process for the call: what other processes on a shared machine
    do does not count (SQLite works inside this process; PostgreSQL's server does not).

    The objects the test run already holds (every earlier test's) are frozen out of the
    collector first: a command's own process holds none of them, and one full collection
    walking them would land in whichever call it happens to fall on."""
    gc.collect()
    gc.freeze()
    try:
        started = time.process_time()
        call()
        return time.process_time() - started
    finally:
        gc.unfreeze()


def test_batch_sheets_grow_linearly(db: Database) -> None:
    chemistry.add_reference_material(db, "boss", {"name": "RM-A", "element": "Ca"})

    def run(columns: int) -> float:
        request = {
            "batch": make.batch(db),
            "filename": "columns.csv",
            "content": lab_files.batch_sheet(columns),
        }
        return timed(lambda: batch_sheet.enter_sheet(db, "tech", request))

    assert_linear(run, SHEET_SIZES)


def export(rows: int, shift: int) -> bytes:
    """The first half bracketing standards, then reference-material runs, a standard last.

    The shape the old bracketing check liked least: each later run scanned every
    standard before it for one measured after it.
    """
    lines = ["Run,Name,r4440,r4442"]
    for run in range(1, rows + 1):
        name = "STD-X" if run <= rows // 2 or run == rows else "RM-A"
        lines.append(f"{run},{name},{2.1 + (run + shift) / 1e9:.9f},{3.2 + run / 1e9:.9f}")
    return ("\n".join(lines) + "\n").encode()


def test_instrument_imports_grow_linearly(db: Database) -> None:
    chemistry.add_reference_material(db, "boss", {"name": "RM-A", "element": "Ca"})
    columns = {"run_order": "Run", "sample_name": "Name", "ratios": RATIOS}
    profile = {"format": "csv", "columns": columns}
    sessions.save_profile(db, "tech", {"name": "mc", "definition": profile})

    def run(rows: int) -> float:
        n = next(_unique)
        request = {
            "profile": "mc",
            "filename": f"run-{n}.csv",
            "content": export(rows, n),  # new bytes each time: the same export is refused
            "name": f"session {n}",
            "instrument": "MC-ICP-MS (invented)",
            "element": "Ca",
            "bracketing_standard": "STD-X",
        }
        return timed(lambda: sessions.import_session(db, "tech", request))

    assert_linear(run, SIZES)


def test_session_reductions_grow_linearly(db: Database) -> None:
    """Reducing a session finds each run's neighbouring standards by search: the reduction
    that scanned every standard for every run grew with the square of the session."""
    chemistry.add_reference_material(db, "boss", {"name": "RM-A", "element": "Ca"})
    columns = {"run_order": "Run", "sample_name": "Name", "ratios": RATIOS}
    sessions.save_profile(
        db, "tech", {"name": "mc", "definition": {"format": "csv", "columns": columns}}
    )

    def run(rows: int) -> float:
        n = next(_unique)
        request = {
            "profile": "mc",
            "filename": f"run-{n}.csv",
            "content": export(rows, n),
            "name": f"session {n}",
            "instrument": "MC-ICP-MS (invented)",
            "element": "Ca",
            "bracketing_standard": "STD-X",
        }
        session = sessions.import_session(db, "tech", request).item.id
        return timed(lambda: reduction.reduce_session(db, "tech", {"session": session}))

    assert_linear(run, SIZES)


def test_manifests_grow_linearly(db: Database) -> None:
    def run(rows: int) -> float:
        content = lab_files.lender_list(rows)
        request = {"loan": make.loan(db), "filename": "list.csv", "content": content}
        return timed(lambda: manifests.import_manifest(db, "boss", request))

    assert_linear(run, SIZES)


def test_sr_curves_grow_linearly(db: Database) -> None:
    def run(points: int) -> float:
        lines = ["age_ma,87sr/86sr,u"]
        lines += [f"{k / 100:.2f},{0.7070 + k * 1e-8:.8f},0.00002" for k in range(points)]
        request = {
            "name": f"curve {next(_unique)}",
            "content": ("\n".join(lines) + "\n").encode(),
            "filename": "curve.csv",
        }
        return timed(lambda: screening.add_curve(db, "tech", request))

    assert_linear(run, SIZES)


def test_mapping_profiles_grow_linearly(db: Database) -> None:
    """A profile's rows are its columns: many ratios for an instrument, many headings for
    a manifest (far more than any file has; the reading must not grow faster anyway)."""

    def run(columns: int) -> float:
        ratios = {f"{1000 + k // 900}/{1 + k % 900}": f"col {k}" for k in range(columns)}
        headings = {"run_order": "Run", "sample_name": "Name", "ratios": ratios}
        profile = {"format": "csv", "columns": headings}
        mapping = {"columns": {f"term{k}": f"heading {k}" for k in range(columns)}}
        n = next(_unique)
        return timed(
            lambda: sessions.save_profile(db, "tech", {"name": f"p{n}", "definition": profile})
        ) + timed(
            lambda: manifests.save_mapping(db, "tech", {"name": f"m{n}", "definition": mapping})
        )

    assert_linear(run, SIZES)
