"""A writer kept waiting past its wait is told who holds the database and since when.

On both backends another writer holds the lock in a thread (a real unit of work), and a
second writer, opened with a short ``TRACKER_BUSY_WAIT``, is refused with ``Busy``:
nothing written, the holder and its start named. Also what is said when the holder is
not a tracker writer, and that the SQLite note lives exactly as long as the lock.
"""

from __future__ import annotations

import json
import socket
import sqlite3
from collections.abc import Iterator
from contextlib import closing, contextmanager
from datetime import timedelta
from pathlib import Path

import pytest
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url

from tests.busy import held
from tests.conftest import Counts
from tracker.db.database import Database, open_database
from tracker.db.engine import PG_WRITER_LOCK
from tracker.db.writer_lock import note_path, read_note
from tracker.domain.errors import Busy, RuleViolation
from tracker.services.admin import setup
from tracker.services.core.uow import unit_of_work

WAIT_S = "0.3"
SLACK = timedelta(seconds=1)  # PostgreSQL's clock is the server's: the same machine here


@pytest.fixture
def waiter(db_url: str, monkeypatch: pytest.MonkeyPatch) -> Iterator[Database]:
    """The second writer: the same database, opened with a short busy wait."""
    monkeypatch.setenv("TRACKER_BUSY_WAIT", WAIT_S)
    second = open_database(db_url)
    yield second
    second.close()


def add_place(db: Database, name: str) -> int:
    return setup.add_location(db, "tech", {"kind": "building", "name": name}).event_seq


def test_a_second_writer_hears_who_holds_the_database_and_writes_nothing(
    db_url: str, waiter: Database, counts: Counts
) -> None:
    before = counts()
    with held(db_url, "boss", "enter batch sheet") as holder:
        with pytest.raises(Busy) as caught:
            add_place(waiter, "Annex (invented)")
        assert counts() == before
    busy = caught.value
    assert busy.exit_code == 3
    assert busy.holder.startswith('boss running "enter batch sheet" (')
    assert busy.since is not None
    assert holder.taking - SLACK <= busy.since <= holder.taken + SLACK
    assert busy.one_line().startswith('the database is busy: boss running "enter batch sheet"')
    assert busy.one_line().endswith("; try again")
    assert counts() == before
    assert add_place(waiter, "Annex (invented)") == before["ledger_head"] + 1  # free again


@pytest.mark.parametrize("db_url", ["sqlite"], indirect=True)
def test_the_sqlite_note_lives_exactly_as_long_as_the_lock(db: Database, db_url: str) -> None:
    assert db.path is not None
    note = note_path(db.path)
    with held(db_url, "boss", "import lender manifest"):
        holder = read_note(db.path)
        assert holder is not None and (holder.operator, holder.doing) == (
            "boss",
            "import lender manifest",
        )
    assert not note.exists()  # rolled back: gone
    add_place(db, "Cold room (invented)")
    assert not note.exists()  # committed: gone
    with pytest.raises(RuleViolation, match="already exists"):  # refused inside the unit of work
        add_place(db, "Cold room (invented)")
    assert not note.exists()


def record_a_thing(db: Database) -> str:
    """A stand-in service: what waiters are told when a service does not say."""
    assert db.path is not None
    with unit_of_work(db, "tech"):
        holder = read_note(db.path)
    assert holder is not None
    return holder.doing


@pytest.mark.parametrize("db_url", ["sqlite"], indirect=True)
def test_by_default_a_writer_is_named_after_its_service(db: Database) -> None:
    assert record_a_thing(db) == "record a thing"


@contextmanager
def sqlite_lock_without_note(path: Path) -> Iterator[None]:
    """Another program holds the SQLite writer lock (no tracker, so no note)."""
    with closing(sqlite3.connect(path, isolation_level=None)) as other:
        other.execute("BEGIN IMMEDIATE")
        try:
            yield
        finally:
            other.execute("ROLLBACK")


@pytest.mark.parametrize("db_url", ["sqlite"], indirect=True)
def test_a_sqlite_holder_that_left_no_note_or_a_stale_one_is_said_so(
    db: Database, waiter: Database, counts: Counts
) -> None:
    assert db.path is not None
    before = counts()
    with sqlite_lock_without_note(db.path), pytest.raises(Busy) as caught:
        add_place(waiter, "Annex (invented)")
    assert "no tracker writer left a note" in caught.value.one_line()
    assert caught.value.since is None
    # a writer killed while it held the lock leaves its note; the lock went with it
    stale = note_path(db.path)
    note = {"operator": "tech", "doing": "drill", "pid": 2147483646, "host": socket.gethostname()}
    stale.write_text(json.dumps({**note, "since": "2026-01-05T09:00:00+00:00"}), encoding="utf-8")
    with sqlite_lock_without_note(db.path), pytest.raises(Busy) as caught:
        add_place(waiter, "Annex (invented)")
    line = caught.value.one_line()
    assert 'the note left by tech running "drill" (process 2147483646' in line
    assert "is stale: that process has ended" in line
    assert counts() == before
    add_place(waiter, "Annex (invented)")  # the next holder replaces the stale note
    assert not stale.exists()


@pytest.mark.postgresql
@pytest.mark.parametrize("db_url", ["postgresql"], indirect=True)
def test_a_postgresql_holder_that_is_not_tracker_is_named_by_its_login(
    db_url: str, waiter: Database, counts: Counts
) -> None:
    before = counts()
    other = create_engine(make_url(db_url).set(drivername="postgresql+psycopg"))
    try:
        with other.connect() as connection:
            connection.execute(text("SET application_name = 'nightly check'"))
            started = connection.execute(text("SELECT now()")).scalar_one()  # opens the xact
            connection.execute(text(f"SELECT pg_advisory_xact_lock({PG_WRITER_LOCK})"))
            with pytest.raises(Busy) as caught:
                add_place(waiter, "Annex (invented)")
            connection.rollback()
    finally:
        other.dispose()
    busy = caught.value
    assert busy.holder.startswith("another client (nightly check, database user ")
    assert busy.since == started  # the holder's xact_start: its transaction's now()
    assert counts() == before


def test_an_upgrade_kept_waiting_is_busy_too(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Opening an older file upgrades it, which writes: it waits for the lock like a writer."""
    old = tmp_path / "first-release.sqlite"
    old.write_bytes((Path(__file__).parents[1] / "fixtures" / "demo-d02aa5d.sqlite").read_bytes())
    monkeypatch.setenv("TRACKER_BUSY_WAIT", WAIT_S)
    with sqlite_lock_without_note(old), pytest.raises(Busy) as caught:
        open_database(old)
    assert "no tracker writer left a note" in caught.value.one_line()
    open_database(old).close()  # once the other program is done, it upgrades
