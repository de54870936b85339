"""The busy refusal's one line, and the note a SQLite writer leaves for those it keeps waiting."""

from __future__ import annotations

import json
import os
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from datetime import UTC, datetime
from pathlib import Path

import pytest

from tracker.db import writer_lock
from tracker.db.engine import busy_wait_ms
from tracker.db.writer_lock import Holder, leave_note, note_path, read_note
from tracker.domain.errors import Busy, InputError

SINCE = datetime(2026, 3, 4, 5, 6, 7, 890_000, tzinfo=UTC)


@pytest.fixture
def utc_zone(monkeypatch: pytest.MonkeyPatch) -> Iterator[None]:
    """Local time is UTC for the test, so the time shown can be written down by hand."""
    monkeypatch.setenv("TZ", "UTC")
    time.tzset()
    yield
    monkeypatch.undo()
    time.tzset()


def test_the_line_names_the_holder_and_the_time_and_says_try_again(utc_zone: None) -> None:
    holder = Holder("tech", "enter batch sheet", 4242, "bench-2", SINCE)
    busy = Busy(holder.describe(), holder.since)
    assert busy.one_line() == (
        'the database is busy: tech running "enter batch sheet" (process 4242 on bench-2) '
        "since 2026-03-04 05:06:07 UTC; try again"
    )
    assert busy.exit_code == 3


def test_the_time_is_local_time_with_its_zone(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("TZ", "Etc/GMT-2")  # POSIX sign: two hours east of Greenwich
    time.tzset()
    try:
        assert "since 2026-03-04 07:06:07 +02;" in Busy("x", SINCE).one_line()
    finally:
        monkeypatch.undo()
        time.tzset()


def test_the_json_refusal_carries_the_holder_and_the_moment(utc_zone: None) -> None:
    said = Busy('tech running "drill" (process 1 on a)', SINCE).as_dict()
    assert said["error"] == "Busy" and said["exit_code"] == 3
    assert said["holder"] == 'tech running "drill" (process 1 on a)'
    assert said["since"] == "2026-03-04T05:06:07.890000+00:00"
    assert said["reason"] == Busy('tech running "drill" (process 1 on a)', SINCE).one_line()
    json.dumps(said)  # a script reads it as one JSON object


def test_without_a_time_the_line_says_no_time() -> None:
    line = Busy("another program holds it", None).one_line()
    assert line == "the database is busy: another program holds it; try again"


def test_a_note_left_is_read_back_and_is_as_private_as_the_database(tmp_path: Path) -> None:
    database = tmp_path / "lab.sqlite"
    database.write_bytes(b"")
    database.chmod(0o640)
    holder = Holder("tech", "import lender manifest", os.getpid(), socket.gethostname(), SINCE)
    path = leave_note(database, holder)
    assert path == note_path(database) == tmp_path / "lab.sqlite.writer"
    assert read_note(database) == holder
    assert path.stat().st_mode & 0o777 == 0o640
    assert sorted(p.name for p in tmp_path.iterdir()) == ["lab.sqlite", "lab.sqlite.writer"]


def test_no_note_and_an_unreadable_note_are_said_as_no_tracker_writer(tmp_path: Path) -> None:
    database = tmp_path / "lab.sqlite"
    assert "no tracker writer left a note" in writer_lock._sqlite_holder(database).one_line()
    note_path(database).write_text("{not json", encoding="utf-8")
    assert read_note(database) is None


def test_a_note_whose_process_has_ended_is_said_to_be_stale(tmp_path: Path) -> None:
    database = tmp_path / "lab.sqlite"
    ended = subprocess.run(
        [sys.executable, "-c", "import os; print(os.getpid())"],
        check=True,
        capture_output=True,
        text=True,
    )
    pid = int(ended.stdout)
    leave_note(database, Holder("tech", "drill", pid, socket.gethostname(), SINCE))
    line = writer_lock._sqlite_holder(database).one_line()
    assert f'the note left by tech running "drill" (process {pid} on' in line
    assert "is stale: that process has ended" in line
    alive = Holder("tech", "drill", os.getpid(), socket.gethostname(), SINCE)
    leave_note(database, alive)
    assert writer_lock._sqlite_holder(database).holder == alive.describe()


def test_a_note_from_another_machine_is_believed(tmp_path: Path) -> None:
    """Its process cannot be asked from here, so it is taken to be alive."""
    database = tmp_path / "lab.sqlite"
    other = Holder("tech", "drill", 1, socket.gethostname() + "-elsewhere", SINCE)
    leave_note(database, other)
    assert writer_lock._sqlite_holder(database).holder == other.describe()


def test_the_busy_wait_is_read_from_the_environment(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("TRACKER_BUSY_WAIT", raising=False)
    assert busy_wait_ms() == 30_000
    monkeypatch.setenv("TRACKER_BUSY_WAIT", "0.25")
    assert busy_wait_ms() == 250
    for bad in ("soon", "-1", "nan", "100000"):
        monkeypatch.setenv("TRACKER_BUSY_WAIT", bad)
        with pytest.raises(InputError) as caught:
            busy_wait_ms()
        assert caught.value.field == "TRACKER_BUSY_WAIT" and caught.value.value == bad


def test_the_postgresql_name_of_a_writer_fits_and_is_ascii() -> None:
    name = writer_lock.application_name("tech", "import δ values " + "x" * 80)
    assert name.startswith('tracker: tech running "import ? values')
    assert len(name.encode()) <= 63 and name.isascii()
