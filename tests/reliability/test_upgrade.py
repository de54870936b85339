"""A database written by the first release upgrades with every row and ledger event intact.

The fixture is the demo database as commit d02aa5d made it (tests/fixtures/README.md).
The test reads every row of every table straight from the file with the standard
library's sqlite3, lets tracker open (back up and upgrade) a copy, and compares again.
"""

from __future__ import annotations

import json
import shutil
import sqlite3
from decimal import Decimal
from pathlib import Path
from typing import Any

from tests.cli.conftest import invoke, ok_json
from tests.reliability.report import record
from tracker.db import migrate
from tracker.db.database import open_database
from tracker.services.ledger import chain

FIXTURE = Path(__file__).resolve().parents[1] / "fixtures" / "demo-d02aa5d.sqlite"
FIRST_REVISION = "0002_append_only_ledger"


def _tables(path: Path) -> dict[str, dict[tuple[Any, ...], dict[str, Any]]]:
    """Every table's rows keyed by primary key, read without tracker's code."""
    connection = sqlite3.connect(path)
    try:
        names = [
            n
            for (n,) in connection.execute(
                "SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%'"
            )
        ]
        found = {}
        for name in names:
            info = connection.execute(f"PRAGMA table_info({name})").fetchall()
            columns = [row[1] for row in info]
            keys = [row[1] for row in sorted(info, key=lambda r: r[5]) if row[5]] or columns
            cursor = connection.execute(f"SELECT * FROM {name}")
            rows = [dict(zip(columns, values, strict=True)) for values in cursor]
            found[name] = {tuple(r[k] for k in keys): r for r in rows}
        return found
    finally:
        connection.close()


def _old_ledger_head(path: Path) -> tuple[int, str]:
    """The old file's newest event, read without upgrading it (today's verifier reads the
    columns revision 0009 adds, so it verifies the file once upgraded)."""
    connection = sqlite3.connect(path)
    try:
        seq, digest = connection.execute(
            "SELECT seq, hash FROM custody_event ORDER BY seq DESC LIMIT 1"
        ).fetchone()
    finally:
        connection.close()
    return int(seq), str(digest)


def test_first_release_database_upgrades_with_every_row_and_event_intact(tmp_path: Path) -> None:
    path = tmp_path / "lab.sqlite"
    shutil.copyfile(FIXTURE, path)
    path.chmod(0o600)
    before = _tables(path)
    assert before["alembic_version"] == {(FIRST_REVISION,): {"version_num": FIRST_REVISION}}
    head_before = _old_ledger_head(path)
    assert head_before[0] == len(before["custody_event"]) == 114

    db = open_database(path)  # backs the file up, then upgrades it
    try:
        head_after = chain.verify(db)
    finally:
        db.close()
    after = _tables(path)

    assert head_after.ok and (head_after.head_seq, head_after.head_hash) == head_before
    # recorded before signing: every event unsigned, none counted as a valid signature
    assert (head_after.unsigned, head_after.signed, head_after.signing_since) == (114, 0, None)
    changed = []
    converted = 0
    for table, rows in before.items():
        if table == "alembic_version":
            continue
        assert after[table].keys() == rows.keys(), f"{table}: rows added or lost"
        for key, row in rows.items():
            kept = {column: after[table][key][column] for column in row}
            exact = {c: v for c, v in kept.items() if isinstance(v, str) and _was_float(row[c])}
            converted += len(exact)
            if {**kept, **{c: row[c] for c in exact}} != row or any(
                v != _shortest(row[c]) for c, v in exact.items()
            ):
                changed.append((table, key))
    assert changed == [] and converted > 0
    assert _triggers(path) == _triggers(_fresh(tmp_path))
    assert after["alembic_version"] == {(migrate.HEAD,): {"version_num": migrate.HEAD}}
    backup = tmp_path / f"lab.sqlite.bak-{FIRST_REVISION}"
    assert _tables(backup) == before and backup.stat().st_mode & 0o077 == 0
    row_count = sum(len(r) for r in before.values())
    record(
        "upgrade from the first release (d02aa5d demo)",
        f"{len(before)} tables, {row_count} rows, {head_after.events} events",
        f"{len(changed)} rows changed, ledger head kept (#{head_after.head_seq}), "
        f"{head_after.unsigned} events unsigned (recorded before signing)",
    )


def _was_float(value: object) -> bool:
    return isinstance(value, float)


def _shortest(value: object) -> str:
    """A float measured value as the upgrade keeps it: its shortest round-trip text
    (Python's repr), written without an exponent (revision 0011)."""
    return format(Decimal(repr(value)), "f")


def _triggers(path: Path) -> dict[str, str]:
    connection = sqlite3.connect(path)
    try:
        found = connection.execute("SELECT name, sql FROM sqlite_master WHERE type = 'trigger'")
        return {str(name): str(sql) for name, sql in found}
    finally:
        connection.close()


def _fresh(tmp_path: Path) -> Path:
    """A database made by today's tracker, for its schema."""
    fresh = tmp_path / "fresh.sqlite"
    open_database(fresh, create=True).close()
    return fresh


def test_upgraded_first_release_database_takes_new_work(tmp_path: Path) -> None:
    """The upgraded file is a working database once its manager registered the first key:
    today's commands write, sign and verify on it; before that, nothing is recorded."""
    path = tmp_path / "lab.sqlite"
    shutil.copyfile(FIXTURE, path)
    path.chmod(0o600)
    operators = _tables(path)["operator"].values()
    manager = next(o["code"] for o in operators if o["role"] == "manager")
    add = ("location", "add", "building", "Annex Z")
    refused = invoke(*add, db=path, actor=manager)
    assert refused.exit_code == 1 and "has no signing keys yet" in refused.stderr
    assert len(refused.stderr.strip().splitlines()) == 1
    public = tmp_path / "first.pub"
    ok_json(invoke("key", "new", "--out", str(public), actor=manager, as_json=True))
    first = ok_json(
        invoke("key", "register", manager, str(public), db=path, actor=manager, as_json=True)
    )
    assert first["event_seq"] == 115
    building = ok_json(invoke(*add, db=path, actor=manager, as_json=True))
    assert building["event_seq"] == 116
    verified = ok_json(invoke("ledger", "verify", db=path, as_json=True))
    assert verified["ok"] and verified["events"] == 116
    assert (verified["unsigned"], verified["signed"], verified["signing_since"]) == (114, 2, 115)
    technician = next(o["code"] for o in operators if o["role"] == "technician")
    late = invoke(*add[:-1], "Annex Y", db=path, actor=technician)
    assert late.exit_code == 1 and len(late.stderr.strip().splitlines()) == 1
    # no key of theirs is registered yet (said either way: a key file of theirs may be here)
    assert "has no registered signing key" in late.stderr or "is not registered" in late.stderr


def test_an_upgraded_first_release_database_is_audited_as_far_as_its_events_say(
    tmp_path: Path,
) -> None:
    """Events of the first release state no row facts: the audit says so, checks what their
    payloads do state (a catalogue number, a drill's weighings), and checks everything for
    events recorded after the upgrade."""
    path = tmp_path / "lab.sqlite"
    shutil.copyfile(FIXTURE, path)
    path.chmod(0o600)
    old = _tables(path)
    clean = ok_json(invoke("ledger", "audit", db=path, as_json=True))
    assert clean["ok"] and not clean["complete"] and clean["checked_from_event"] == 115
    statement = clean["not_checked"]
    assert "up to #114" in statement and "from event #115 on every row and field" in statement
    assert clean["unchecked_rows"]["concentration"] == len(old["concentration"])
    assert "status" in clean["unchecked_fields"]["powder"]  # no old payload states it

    # what the old payloads do state is checked: a catalogue number and a drilled mass
    specimen = old["specimen"][(3,)]
    powder = old["powder"][(2,)]
    with sqlite3.connect(path) as connection:
        connection.execute("UPDATE specimen SET catalog_number = 'ALTERED' WHERE id = 3")
        connection.execute("UPDATE powder SET mass_mg = 1.0 WHERE id = 2")
    altered = invoke("ledger", "audit", db=path, as_json=True)
    assert altered.exit_code == 1
    found = {(d["table"], d["field"]): d for d in json.loads(altered.stdout)["discrepancies"]}
    assert set(found) == {("specimen", "catalog_number"), ("powder", "mass_mg")}
    assert found["specimen", "catalog_number"]["ledger"] == specimen["catalog_number"]
    assert found["powder", "mass_mg"]["ledger"] == _shortest(powder["mass_mg"])  # its digits
    record(
        "audit of the first release's upgraded database",
        f"{len(old['custody_event'])} events without facts",
        "says what it could not check and from which event on it checks everything; "
        "2 altered values the old payloads state named",
    )


def test_work_after_the_upgrade_is_checked_in_full(tmp_path: Path) -> None:
    path = tmp_path / "lab.sqlite"
    shutil.copyfile(FIXTURE, path)
    path.chmod(0o600)
    operators = _tables(path)["operator"].values()
    manager = next(o["code"] for o in operators if o["role"] == "manager")
    _register_first_key(tmp_path, path, manager)
    made = ok_json(
        invoke("location", "add", "building", "Annex Z", db=path, actor=manager, as_json=True)
    )
    with sqlite3.connect(path) as connection:
        connection.execute("UPDATE location SET name = 'Annex Y' WHERE name = 'Annex Z'")
    altered = invoke("ledger", "audit", db=path, as_json=True)
    assert altered.exit_code == 1
    (found,) = json.loads(altered.stdout)["discrepancies"]
    assert (found["key"], found["field"], found["ledger"], found["stored"]) == (
        made["item"]["id"],
        "name",
        "Annex Z",
        "Annex Y",
    )


def _register_first_key(tmp_path: Path, path: Path, manager: str) -> None:
    """The upgraded file's manager makes and registers the first signing key."""
    public = tmp_path / "first.pub"
    ok_json(invoke("key", "new", "--out", str(public), actor=manager, as_json=True))
    ok_json(invoke("key", "register", manager, str(public), db=path, actor=manager, as_json=True))
