"""A second writer during a long import: told who holds the database, exit 3, nothing written.

A child process (forked from the warm zygote, see workers.py) enters a batch sheet of
9,000 columns, each with a cut — an import that holds the writer lock for seconds. As soon
as the database names it as the holder, the command line tries to add a location with a
short busy wait (``TRACKER_BUSY_WAIT``), for people and with ``--json``. Both must leave
with exit code 3 and the one line naming the import, write nothing, and the import must
then complete whole, with a ledger that verifies. On SQLite and on PostgreSQL.
"""

from __future__ import annotations

import json
import time
from pathlib import Path

import pytest
from sqlalchemy import Engine, func, select
from typer.testing import CliRunner, Result

from tests import factories as make
from tests import lab_files
from tests.cli.conftest import CLEAN_ENV
from tests.reliability.harness import Zygote, wait_for_files
from tests.reliability.report import record
from tracker.cli import app
from tracker.db.database import open_database
from tracker.db.engine import build_engine, resolve_url
from tracker.db.writer_lock import who_holds
from tracker.domain.models import BatchPosition, CustodyEvent, Cut, Location
from tracker.services.bench import chemistry
from tracker.services.ledger import chain

pytestmark = pytest.mark.slow
BACKENDS = ["sqlite", pytest.param("postgresql", marks=pytest.mark.postgresql)]
COLUMNS = 9000
WAIT_S = 0.5
IMPORT = '"enter batch sheet"'
PLACE = "Annex (invented)"


def holder(engine: Engine) -> str:
    """What holds the writer lock now, as a waiting writer would be told ('' when free)."""
    said = who_holds(engine).holder
    return said if IMPORT in said else ""


def wait_until(engine: Engine, held: bool, timeout: float = 120) -> float:
    deadline = time.monotonic() + timeout
    while bool(holder(engine)) != held:
        assert time.monotonic() < deadline, "the import never took (or never let go of) the lock"
        time.sleep(0.02)
    return time.monotonic()


def add_place(url: str, *extra: str) -> Result:
    argv = ["--db", url, "--as", "boss", *extra, "location", "add", "building", PLACE]
    return CliRunner().invoke(app, argv, env=CLEAN_ENV, catch_exceptions=False)


@pytest.mark.parametrize("db_url", BACKENDS, indirect=True)
def test_a_second_writer_during_a_long_import_is_told_who_and_writes_nothing(
    db_url: str, zygote: Zygote, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    db = open_database(db_url)
    chemistry.add_reference_material(db, "boss", {"name": "RM-A", "element": "Ca"})
    batch = make.batch(db)
    head = chain.verify(db).head_seq
    db.close()
    path = tmp_path / "columns.csv"
    path.write_bytes(lab_files.batch_sheet(COLUMNS))
    engine = build_engine(resolve_url(db_url))
    done = tmp_path / "done.json"
    args = {"db": db_url, "sheets": [[batch, str(path)]], "actor": "tech"}
    pid = zygote.fork("enter_sheets", {**args, "markers": str(tmp_path / "m"), "out": str(done)})
    try:
        taken = wait_until(engine, held=True)
        monkeypatch.setenv("TRACKER_BUSY_WAIT", str(WAIT_S))
        said, scripted = add_place(db_url), add_place(db_url, "--json")
        still = holder(engine)  # the import held the lock through both attempts
        released = wait_until(engine, held=False)
    finally:
        engine.dispose()
    wait_for_files([done], timeout=300)
    assert json.loads(done.read_text(encoding="utf-8")) == {}, "the import itself failed"
    assert still, "the import finished before the second writer was done: make it longer"

    assert said.exit_code == 3 and said.stdout == ""
    (line,) = said.stderr.splitlines()
    assert line.startswith(f"error: the database is busy: tech running {IMPORT} (")
    assert " since " in line and line.endswith("; try again")
    if "://" not in db_url:
        assert f"(process {pid} on " in line  # the child's own note
    assert scripted.exit_code == 3
    refusal = json.loads(scripted.stdout)
    assert (refusal["error"], refusal["exit_code"]) == ("Busy", 3)
    assert refusal["holder"].startswith(f"tech running {IMPORT} (")

    check = open_database(db_url)
    try:
        report = chain.verify(check)
        assert report.ok and report.head_seq == head + 1  # the import's event, nothing else
        with check.read_session() as session:
            assert session.scalar(select(func.count()).where(Location.name == PLACE)) == 0
            entered = session.scalar(select(func.count(BatchPosition.id)))  # the one batch
            cuts = session.scalar(select(func.count(Cut.id)))
            action = session.scalar(select(CustodyEvent.action).where(CustodyEvent.seq == head + 1))
    finally:
        check.close()
    assert (entered, cuts, action) == (COLUMNS, COLUMNS, "batch.sheet_entered")

    backend = "sqlite" if "://" not in db_url else "postgresql"
    record(
        f"a second writer during a long import on {backend}",
        f"a {COLUMNS:,}-column batch sheet holding the lock ≥ {released - taken:.1f} s; "
        f"the second writer waits {WAIT_S} s, twice (text and --json)",
        "exit 3 both times with the one line naming the import's operator and action; "
        "nothing written; the import completed whole; ledger verifies",
    )
