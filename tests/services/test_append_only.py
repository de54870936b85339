"""Custody rows are only ever added: the database refuses edits, and no service attempts one."""

from __future__ import annotations

import re
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import Engine, event, text

from tests import factories as make
from tracker.db.database import Database, open_database
from tracker.domain.ids import check_character
from tracker.io.demo import build_demo
from tracker.services import corrections, ledger

APPEND_ONLY = ("custody_event", "correction")
EDIT = re.compile(
    rf"^\s*(UPDATE|DELETE\s+FROM|TRUNCATE)\s+\"?({'|'.join(APPEND_ONLY)})\b", re.IGNORECASE
)


def _one_row_in_each(db: Database) -> None:
    powder = make.powder(db, make.specimen(db, make.loan(db)), "2.000")
    corrections.correct_weighing(
        db,
        "tech",
        {"item": powder, "tare": "1000.000 mg", "gross": "1002.010 mg", "reason": "misread"},
    )


@pytest.mark.parametrize("table", APPEND_ONLY)
@pytest.mark.parametrize("verb", ["UPDATE {t} SET {c} = {c}", "DELETE FROM {t}"])
def test_the_database_refuses_edits_of_append_only_tables(
    db: Database, table: str, verb: str
) -> None:
    _one_row_in_each(db)
    column = {"custody_event": "payload", "correction": "reason"}[table]
    with pytest.raises(Exception, match="append-only"), db.engine.begin() as conn:
        conn.execute(text(verb.format(t=table, c=column)))
    assert ledger.verify(db).ok


@pytest.fixture
def statements() -> Iterator[list[str]]:
    """Every SQL statement any engine sends while the test runs."""
    seen: list[str] = []

    def spy(_conn: Any, _cursor: Any, statement: str, *_args: Any) -> None:
        seen.append(statement)

    event.listen(Engine, "before_cursor_execute", spy)
    try:
        yield seen
    finally:
        event.remove(Engine, "before_cursor_execute", spy)


def test_no_service_sends_an_update_or_delete_to_append_only_tables(
    tmp_path: Path, statements: list[str]
) -> None:
    """The whole demo (every bench action, labels, sessions, corrections) and more edits."""
    out = tmp_path / "demo.sqlite"
    steps = build_demo(out)
    db = open_database(out)
    try:
        _one_row_in_each_demo(db)
    finally:
        db.close()
    assert steps > 100 and len(statements) > 1000  # the spy saw the work
    writes = [s for s in statements if re.match(r"^\s*(INSERT|UPDATE|DELETE)", s, re.I)]
    assert any("custody_event" in s for s in writes)
    assert [s for s in statements if EDIT.match(s)] == []


def _one_row_in_each_demo(db: Database) -> None:
    """The demo's first powder (2.015 mg, all dissolved) re-weighed a little heavier."""
    powder = "PW-00001-" + check_character("PW00001")
    corrections.correct_weighing(
        db,
        "ines",
        {"item": powder, "tare": "812.341 mg", "gross": "815.863 mg", "reason": "misread"},
    )
