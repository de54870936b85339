"""SIGKILL in the middle of large imports and batch sheets, again and again, on both backends.

A child (forked from the warm zygote, see workers.py) works through a list of large
files — instrument exports of 6 001 rows, batch sheets of 400 columns with a cut each —
skipping those an earlier child finished. The parent kills it at a random moment after
it starts a call (a window a little longer than one call, so kills land before, inside
and after transactions, and during commits). After every kill the database must open,
its ledger verify, and every import be whole or absent; finally one child runs to the
end and every file is in, exactly once.
"""

from __future__ import annotations

import random
import time
from collections import Counter
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import pytest
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from tests import factories as make
from tests import lab_files
from tests.reliability.harness import CrashReport, Zygote, crash_rounds
from tests.reliability.report import record
from tracker.db.database import Database, open_database
from tracker.domain.models import (
    BatchPosition,
    ColumnBatch,
    CustodyEvent,
    Cut,
    EventRef,
    InstrumentSession,
    Label,
    Measurement,
    Specimen,
)
from tracker.services.bench import chemistry
from tracker.services.instrument import sessions
from tracker.services.ledger import chain

pytestmark = pytest.mark.slow
BACKENDS = ["sqlite", pytest.param("postgresql", marks=pytest.mark.postgresql)]
KILLS = 22
EXPORT_ROWS, FILES = 4001, 16
SHEET_COLUMNS, SHEETS = 400, 14
MANIFEST_ROWS, MANIFESTS = 4000, 12
RATIOS = {"44/40": "r4440", "44/42": "r4442"}
PROFILE = {
    "format": "csv",
    "columns": {"run_order": "Run", "sample_name": "Name", "ratios": RATIOS},
}


def _export(seed: int) -> bytes:
    """Standards on odd runs, a reference material or an unmatched row between them."""
    rng = random.Random(seed)
    lines = ["Run,Name,r4440,r4442"]
    for run in range(1, EXPORT_ROWS + 1):
        name = "STD-X" if run % 2 else rng.choice(["RM-A", "tune solution", "wash"])
        lines.append(f"{run},{name},{2.1 + rng.random() / 1e3:.9f},{3.2 + rng.random() / 1e3:.9f}")
    return ("\n".join(lines) + "\n").encode()


def _record(what: str, backend: str, size: str, report: CrashReport, seconds: float) -> None:
    assert report.kills == KILLS, "the job ran out of work before every kill: give it more files"
    record(
        f"crash: {what} on {backend}",
        f"{report.kills} SIGKILLs over {report.rounds} rounds ({size}), {seconds:.0f} s",
        f"kills landed {report.summary()}; after each: opens, ledger verifies, 0 half-written; "
        "a final run completed every file exactly once",
    )


@pytest.mark.parametrize("db_url", BACKENDS, indirect=True)
def test_killed_session_imports_leave_whole_sessions_or_none(
    db_url: str, zygote: Zygote, tmp_path: Path
) -> None:
    db = open_database(db_url)
    chemistry.add_reference_material(db, "boss", {"name": "RM-A", "element": "Ca"})
    sessions.save_profile(db, "tech", {"name": "mc", "definition": PROFILE})
    files = []
    for n in range(FILES):
        path = tmp_path / f"run-{n:02d}.csv"
        path.write_bytes(_export(n))
        files.append(str(path))
    db.close()
    started = time.monotonic()
    args = {"db": db_url, "files": files, "profile": "mc", "actor": "tech"}
    window = _one_call(zygote, tmp_path, "import_files", {**args, "files": files[:1]})
    report = crash_rounds(
        zygote,
        "import_files",
        args,
        tmp_path,
        lambda: _sessions_whole(db_url, FILES),
        kills=KILLS,
        window=window,
        seed=8,
    )
    assert _sessions_whole(db_url, FILES) == FILES  # every file in, exactly once
    backend = db_url.split(":")[0].split("+")[0] if "://" in db_url else "sqlite"
    size = f"{FILES} exports × {EXPORT_ROWS:,} rows"
    _record("instrument import", backend, size, report, time.monotonic() - started)


def _one_call(zygote: Zygote, folder: Path, job: str, args: dict[str, object]) -> float:
    """Time one whole call in a child (the first file), to size the kill window."""
    started = time.monotonic()
    (folder / "calibrate").mkdir()
    crash_rounds(zygote, job, args, folder / "calibrate", lambda: None, kills=0, window=0, seed=0)
    return 1.3 * (time.monotonic() - started)


@contextmanager
def _one_snapshot(db: Database) -> Iterator[Session]:
    """A read session whose statements all see one snapshot.

    On PostgreSQL the server finishes a COMMIT the killed client had already sent; under
    READ COMMITTED it could land between two of a checker's statements (8 sessions counted,
    then 9 import events). REPEATABLE READ makes the checker see the database before that
    commit or after it, never half of each.
    """
    with db.read_session() as session:
        if session.get_bind().dialect.name == "postgresql":
            session.connection(execution_options={"isolation_level": "REPEATABLE READ"})
        yield session


def _sessions_whole(url: str, most: int) -> int:
    """Every session has all its rows and exactly one import event; returns how many."""
    db = open_database(url)
    try:
        assert chain.verify(db).ok
        with _one_snapshot(db) as session:
            sizes = session.execute(
                select(InstrumentSession.source_sha256, func.count(Measurement.id))
                .outerjoin(Measurement)
                .group_by(InstrumentSession.id)
            ).all()
            events = session.execute(
                select(func.count()).where(CustodyEvent.action == "session.imported")
            ).scalar_one()
        assert all(rows == EXPORT_ROWS for _, rows in sizes), sizes
        digests = [digest for digest, _ in sizes]
        assert len(set(digests)) == len(digests) == events <= most
        return len(digests)
    finally:
        db.close()


@pytest.mark.parametrize("db_url", BACKENDS, indirect=True)
def test_killed_batch_sheets_leave_whole_batches_or_empty_ones(
    db_url: str, zygote: Zygote, tmp_path: Path
) -> None:
    db = open_database(db_url)
    chemistry.add_reference_material(db, "boss", {"name": "RM-A", "element": "Ca"})
    batches = [make.batch(db) for _ in range(SHEETS)]
    db.close()
    path = tmp_path / "columns.csv"
    path.write_bytes(lab_files.batch_sheet(SHEET_COLUMNS))
    sheets = [[batch, str(path)] for batch in batches]
    started = time.monotonic()
    args = {"db": db_url, "sheets": sheets, "actor": "tech"}
    window = _one_call(zygote, tmp_path, "enter_sheets", {**args, "sheets": sheets[:1]})
    report = crash_rounds(
        zygote,
        "enter_sheets",
        args,
        tmp_path,
        lambda: _batches_whole(db_url),
        kills=KILLS,
        window=window,
        seed=9,
    )
    assert _batches_whole(db_url) == SHEETS
    backend = "sqlite" if "://" not in db_url else "postgresql"
    size = f"{SHEETS} sheets × {SHEET_COLUMNS} columns and cuts"
    _record("batch sheet", backend, size, report, time.monotonic() - started)


def _batches_whole(url: str) -> int:
    """Each batch has every column and cut of its sheet, or none; returns the full ones."""
    db = open_database(url)
    try:
        assert chain.verify(db).ok
        with _one_snapshot(db) as session:
            positions = Counter(
                dict(
                    session.execute(
                        select(ColumnBatch.id, func.count(BatchPosition.id))
                        .outerjoin(BatchPosition)
                        .group_by(ColumnBatch.id)
                    ).all()
                )
            )
            cuts = session.scalar(select(func.count(Cut.id)))
            events = session.scalars(
                select(CustodyEvent.seq).where(CustodyEvent.action == "batch.sheet_entered")
            ).all()
            linked = session.scalar(
                select(func.count()).select_from(EventRef).where(EventRef.seq.in_(events))
            )
            labels = session.scalar(select(func.count()).where(Label.queued_event_seq.in_(events)))
        full = [b for b, n in positions.items() if n == SHEET_COLUMNS]
        assert all(n in (0, SHEET_COLUMNS) for n in positions.values()), positions
        assert len(events) == len(full) and cuts == len(full) * SHEET_COLUMNS
        assert linked == labels == 2 * len(full) * SHEET_COLUMNS  # a column and its cut each
        return len(full)
    finally:
        db.close()


@pytest.mark.parametrize("db_url", BACKENDS, indirect=True)
def test_killed_manifest_imports_leave_whole_lists_or_none(
    db_url: str, zygote: Zygote, tmp_path: Path
) -> None:
    db = open_database(db_url)
    loans = [make.loan(db) for _ in range(MANIFESTS)]
    db.close()
    pairs = []
    for n, loan in enumerate(loans):
        path = tmp_path / f"list-{n}.csv"
        path.write_bytes(lab_files.lender_list(MANIFEST_ROWS, f"{n}-"))
        pairs.append([loan, str(path)])
    started = time.monotonic()
    args = {"db": db_url, "manifests": pairs, "actor": "boss"}
    window = _one_call(zygote, tmp_path, "import_manifests", {**args, "manifests": pairs[:1]})
    report = crash_rounds(
        zygote,
        "import_manifests",
        args,
        tmp_path,
        lambda: _lists_whole(db_url),
        kills=KILLS,
        window=window,
        seed=10,
    )
    assert _lists_whole(db_url) == MANIFESTS
    backend = "sqlite" if "://" not in db_url else "postgresql"
    size = f"{MANIFESTS} lender lists × {MANIFEST_ROWS:,} specimens"
    _record("manifest import", backend, size, report, time.monotonic() - started)


def _lists_whole(url: str) -> int:
    """Each loan has every specimen of its list or none, and one import event per full list."""
    db = open_database(url)
    try:
        assert chain.verify(db).ok
        with _one_snapshot(db) as session:
            sizes = session.execute(
                select(Specimen.loan_id, func.count(Specimen.id)).group_by(Specimen.loan_id)
            ).all()
            events = session.scalar(
                select(func.count()).where(CustodyEvent.action == "manifest.imported")
            )
        assert all(n == MANIFEST_ROWS for _, n in sizes), sizes
        assert events == len(sizes)
        return len(sizes)
    finally:
        db.close()
