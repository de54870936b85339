"""Custody rows are only ever added: the database refuses edits — UPDATE, DELETE, and inserts
over a row already there (INSERT OR REPLACE, ON CONFLICT ...) — and no service attempts one.
A ledger with no first event is not intact."""

from __future__ import annotations

import re
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import Engine, event, text
from typer.testing import CliRunner

from tests import factories as make
from tests import keys
from tests.cli.conftest import CLEAN_ENV
from tests.conftest import snapshot_counts
from tests.reliability.report import record
from tracker.cli import app
from tracker.db.database import Database, open_database
from tracker.demo import build_demo
from tracker.domain.base import Base
from tracker.domain.errors import RuleViolation
from tracker.domain.ids import check_character
from tracker.services.admin import backups, setup
from tracker.services.bench import drilling
from tracker.services.corrections import weighings
from tracker.services.ledger import chain
from tracker.services.loans import shipments, specimens

APPEND_ONLY = ("custody_event", "correction", "event_ref", "backdated_entry")
EDIT = re.compile(
    rf"^\s*(UPDATE|DELETE\s+FROM|TRUNCATE)\s+\"?({'|'.join(APPEND_ONLY)})\b", re.IGNORECASE
)
OVERWRITE = re.compile(
    rf"^\s*(INSERT\s+OR\s+\w+|REPLACE)\s+INTO\s+\"?({'|'.join(APPEND_ONLY)})\b"
    rf"|^\s*INSERT\s+INTO\s+\"?({'|'.join(APPEND_ONLY)})\b.*\bON\s+CONFLICT\b",
    re.IGNORECASE | re.DOTALL,
)
# The column each test changes in a copy of a stored row, to show the stored row kept its own.
CHANGED = {
    "custody_event": "payload",
    "correction": "reason",
    "event_ref": "ref",
    "backdated_entry": "field",
}


def _one_row_in_each(db: Database) -> None:
    """A correction, an event mentioning a further item (event_ref) and a backdated entry."""
    loan = make.loan(db, received_on="2025-12-20")
    powder = make.powder(db, make.specimen(db, loan), "2.000")
    weighings.correct_weighing(
        db,
        "tech",
        {"item": powder, "tare": "1000.000 mg", "gross": "1002.010 mg", "reason": "misread"},
    )
    parcel = {"loan": loan, "direction": "outgoing", "shipped_on": "2026-01-05"}
    shipment = shipments.add_shipment(db, "boss", parcel).item.id
    spec = make.specimen(db, loan, checked_in=False)
    specimens.check_in(  # a week back: a manager's backdated check-in
        db, "boss", {"specimen": spec, "condition": "ok", "received_at": "2025-12-29T10:00:00Z"}
    )
    drilling.drill(
        db,
        "tech",
        {"specimen": spec, "tissue": "enamel", "tare": "1000.000 mg", "gross": "1000.400 mg"},
    )
    back = {"specimen": spec, "condition": "as received", "shipment": shipment}
    specimens.return_specimen(db, "tech", back)  # mentions the shipment: an event_ref row


@pytest.mark.parametrize("table", APPEND_ONLY)
@pytest.mark.parametrize("verb", ["UPDATE {t} SET {c} = {c}", "DELETE FROM {t}"])
def test_the_database_refuses_edits_of_append_only_tables(
    db: Database, table: str, verb: str
) -> None:
    _one_row_in_each(db)
    before = _rows(db, table)
    assert before
    with pytest.raises(Exception, match="append-only"), db.engine.begin() as conn:
        conn.execute(text(verb.format(t=table, c=CHANGED[table])))
    assert _rows(db, table) == before
    assert chain.verify(db).ok


def _rows(db: Database, table: str) -> list[tuple[Any, ...]]:
    columns = ", ".join(c.name for c in Base.metadata.tables[table].columns)
    with db.engine.connect() as conn:
        return [
            tuple(r) for r in conn.execute(text(f"SELECT {columns} FROM {table} ORDER BY 1, 2"))
        ]


# Every unique key of each table refusing overwrites (event_ref's whole row is its key, so an
# insert over one of its rows could change nothing), and the kinds of overwriting insert.
KEYS = {
    "custody_event": ("seq", "hash"),
    "correction": ("id",),
    "backdated_entry": ("id", "event_seq"),
}
OVERWRITES = {
    "sqlite": ("INSERT OR REPLACE", "REPLACE", "INSERT OR IGNORE", "DO UPDATE", "DO NOTHING"),
    "postgresql": ("DO UPDATE", "DO NOTHING"),
}
SEEN: dict[str, set[str]] = {}


def _overwrite(table: str, key: str, how: str) -> str:
    """A copy of the table's first row, one column changed, inserted over it by ``key``.

    For a table's second unique key (``hash``, ``event_seq``) the copy gets a new primary
    key, so on SQLite a REPLACE would delete the stored row that holds that key.
    """
    columns = [c.name for c in Base.metadata.tables[table].columns]
    primary = columns[0]
    first = f"(SELECT MIN({primary}) FROM {table})"
    values = [_copied(table, column, primary, key) for column in columns]
    copy = f"SELECT {', '.join(values)} FROM {table} WHERE {primary} = {first}"
    names = ", ".join(columns)
    if how in ("INSERT OR REPLACE", "REPLACE", "INSERT OR IGNORE"):
        return f"{how} INTO {table} ({names}) {copy}"
    action = "DO NOTHING" if how == "DO NOTHING" else f"DO UPDATE SET {CHANGED[table]} = 'forged'"
    return f"INSERT INTO {table} ({names}) {copy} ON CONFLICT ({key}) {action}"


def _copied(table: str, column: str, primary: str, key: str) -> str:
    if column == CHANGED[table]:
        return f"'forged' AS {column}"
    if column == primary and key != primary:
        return f"(SELECT MAX({primary}) + 1000 FROM {table}) AS {column}"
    return column


@pytest.mark.parametrize("table", list(KEYS))
def test_inserts_over_a_stored_row_are_refused_and_the_row_is_unchanged(
    db: Database, table: str
) -> None:
    _one_row_in_each(db)
    tried = 0
    for key in KEYS[table]:
        for how in OVERWRITES[db.backend]:
            before, counts = _rows(db, table), snapshot_counts(db)
            with pytest.raises(Exception, match="append-only"), db.engine.begin() as conn:
                conn.execute(text(_overwrite(table, key, how)))
            assert _rows(db, table) == before, (key, how)
            assert snapshot_counts(db) == counts
            tried += 1
    assert chain.verify(db).ok
    SEEN.setdefault(db.backend, set()).add(f"{table}×{tried}")
    record(
        "INSERT OR REPLACE",
        "; ".join(f"{b}: {', '.join(sorted(t))}" for b, t in sorted(SEEN.items())),
        "every insert over a stored row of the ledger, the corrections and the backdated "
        "entries (OR REPLACE, REPLACE, OR IGNORE, ON CONFLICT DO UPDATE/DO NOTHING, by each "
        "unique key) refused; rows unchanged; ledger verifies",
    )


def test_a_plain_insert_of_a_forged_event_is_possible_but_verify_finds_it(db: Database) -> None:
    """Appending is what the table is for; the hash chain, not the database, catches a forgery."""
    make.loan(db)
    head = chain.verify(db)
    assert head.ok
    with db.engine.begin() as conn:
        conn.execute(
            text(
                "INSERT INTO custody_event (seq, at, operator, action, object_ref, parent_ref, "
                "payload, prev_hash, hash) SELECT seq + 1, at, operator, 'powder.drilled', "
                "object_ref, parent_ref, '{}', hash, :forged FROM custody_event WHERE seq = :head"
            ),
            {"forged": "f" * 64, "head": head.head_seq},
        )
    report = chain.verify(db)
    assert not report.ok and report.broken_seq == head.head_seq + 1
    assert report.reason is not None and "altered" in report.reason


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
    assert [s for s in statements if OVERWRITE.match(s)] == []
    # no service deletes any row (a workstation login on PostgreSQL may not: docs/storage.md)
    assert [s for s in writes if re.match(r"^\s*DELETE", s, re.I)] == []


def _one_row_in_each_demo(db: Database) -> None:
    """The demo's first powder (2.015 mg, all dissolved) re-weighed a little heavier."""
    powder = "PW-00001-" + check_character("PW00001")
    weighings.correct_weighing(
        db,
        "ines",
        {"item": powder, "tare": "812.341 mg", "gross": "815.863 mg", "reason": "misread"},
    )


# ---------------------------------------------------------------- a ledger without its first event

EMPTY_SEEN: dict[str, set[str]] = {}


def _verify_line(db: Database) -> tuple[int, list[str]]:
    """`tracker --db URL ledger verify`: its exit code and the lines it prints."""
    result = CliRunner().invoke(app, ["--db", db.url, "ledger", "verify"], env=CLEAN_ENV)
    return result.exit_code, result.stdout.splitlines()


@pytest.mark.parametrize("cut", ["every event", "event 1"])
def test_a_ledger_without_its_first_event_is_not_intact(db: Database, cut: str) -> None:
    assert chain.verify(db).ok and _verify_line(db)[0] == 0
    with db.engine.begin() as conn:  # as a tamperer would: the guard dropped, rows deleted
        if db.backend == "sqlite":
            conn.execute(text("DROP TRIGGER custody_event_no_delete"))
        else:
            conn.execute(text("DROP TRIGGER custody_event_append_only ON custody_event"))
        conn.execute(
            text("DELETE FROM custody_event" + (" WHERE seq = 1" if cut == "event 1" else ""))
        )
    report = chain.verify(db)
    assert not report.ok and report.broken_seq == 1 and report.events == 0
    code, lines = _verify_line(db)
    assert code == 1 and len(lines) == 1 and lines[0].startswith("ledger BROKEN at event #1: ")
    expected = "holds no events" if cut == "every event" else "no first event"
    assert expected in lines[0]
    EMPTY_SEEN.setdefault(db.backend, set()).add(cut)
    record(
        "an empty ledger",
        "; ".join(f"{b}: {', '.join(sorted(c))} deleted" for b, c in sorted(EMPTY_SEEN.items())),
        "`ledger verify` exits 1 with one line (no events / no first event); a database "
        "fresh from `tracker init` verifies with its first event",
    )


def test_a_fresh_database_verifies_and_an_uninitialised_one_is_not_restored(
    tmp_path: Path,
) -> None:
    """`tracker init` writes event 1, so a fresh database, and its backup, verify; a file
    with the schema but no ledger is reported broken by `backup` and refused by `restore`."""
    fresh = setup.init_database(
        tmp_path / "fresh.sqlite", {"code": "amy", "name": "Amy Test"}, signer=keys.signer("amy")
    )
    try:
        report = chain.verify(fresh)
        assert report.ok and report.events == 1
        copy = backups.backup(fresh, tmp_path / "fresh-copy.sqlite")
        assert copy.ledger_ok and copy.events == 1
    finally:
        fresh.close()
    bare = open_database(tmp_path / "bare.sqlite", create=True)  # the schema, no first event
    try:
        assert not chain.verify(bare).ok
        copy = backups.backup(bare, tmp_path / "bare-copy.sqlite")
        assert not copy.ledger_ok and copy.problem is not None and "no events" in copy.problem
    finally:
        bare.close()
    target = tmp_path / "fresh.sqlite"
    before = target.read_bytes()
    with pytest.raises(RuleViolation, match="holds no events"):
        backups.restore(str(target), "amy", tmp_path / "bare-copy.sqlite")
    assert target.read_bytes() == before
