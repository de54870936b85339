"""A command kept waiting by another writer: one line, exit 3, nothing written; also --json."""

from __future__ import annotations

import json

import pytest
from typer.testing import CliRunner, Result

from tests.busy import held
from tests.cli.conftest import CLEAN_ENV
from tests.conftest import snapshot_counts
from tracker.cli import app
from tracker.db.database import Database

PLACE = ("location", "add", "building", "Annex (invented)")


def tracker(url: str, *args: str) -> Result:
    argv = ["--db", url, "--as", "tech", *args]
    return CliRunner().invoke(app, argv, env=CLEAN_ENV, catch_exceptions=False)


def test_a_busy_database_is_one_line_exit_3_and_nothing_written(
    db: Database, db_url: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("TRACKER_BUSY_WAIT", "0.3")
    before = snapshot_counts(db)
    with held(db_url, "boss", "import lender manifest"):
        said = tracker(db_url, *PLACE)
        scripted = tracker(db_url, "--json", *PLACE)
        assert snapshot_counts(db) == before
    assert said.exit_code == 3 and said.stdout == ""
    (line,) = said.stderr.splitlines()
    assert line.startswith('error: the database is busy: boss running "import lender manifest" (')
    assert " since " in line and line.endswith("; try again")
    assert "Traceback" not in said.stderr
    assert scripted.exit_code == 3
    refusal = json.loads(scripted.stdout)  # exactly one JSON document
    assert refusal["error"] == "Busy" and refusal["exit_code"] == 3
    assert refusal["holder"].startswith('boss running "import lender manifest" (')
    assert refusal["since"] is not None
    assert refusal["reason"] == line.removeprefix("error: ")
    assert snapshot_counts(db) == before
    assert tracker(db_url, *PLACE).exit_code == 0  # once the holder is done


def test_a_busy_wait_that_is_no_number_is_refused_by_name(
    db: Database, db_url: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("TRACKER_BUSY_WAIT", "a while")
    before = snapshot_counts(db)
    said = tracker(db_url, *PLACE)
    assert said.exit_code == 2
    assert said.stderr.strip() == (
        "error: TRACKER_BUSY_WAIT: 'a while': is not a number of seconds (0 to 86400)"
    )
    assert snapshot_counts(db) == before
