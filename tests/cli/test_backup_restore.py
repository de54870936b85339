"""`tracker backup` and `tracker restore`: private copies, verified before anything is replaced."""

from __future__ import annotations

import sqlite3
import stat
import subprocess
import sys
from pathlib import Path

import pytest

from tests.cli.budget_book import validate
from tests.cli.conftest import Lab, counts, invoke, ok_json
from tracker.db.database import Database
from tracker.db.sqlite_files import read_only
from tracker.domain.errors import InputError
from tracker.services.admin import backups
from tracker.services.ledger import chain


def _mode(path: Path) -> int:
    return stat.S_IMODE(path.stat().st_mode)


def _head(path: Path) -> tuple[int, str]:
    db = read_only(path)
    try:
        report = chain.verify(db)
    finally:
        db.close()
    assert report.ok
    return report.head_seq, report.head_hash


def _add_building(lab: Lab, name: str) -> None:
    ok_json(
        invoke("location", "add", "building", name, db=lab.path, actor=lab.manager, as_json=True)
    )


def test_backup_is_private_verified_and_never_overwrites(lab: Lab, tmp_path: Path) -> None:
    copy = tmp_path / "copy.sqlite"
    made = ok_json(invoke("backup", str(copy), db=lab.path, as_json=True))
    validate(made, "backup.schema.json")
    assert _mode(copy) == 0o600  # readable and writable by the owner only
    assert (made["head_seq"], made["head_hash"]) == _head(lab.path) == _head(copy)
    assert made["ledger_ok"] and made["revision"]

    copy.write_bytes(b"an older backup")
    again = invoke("backup", str(copy), db=lab.path)
    assert again.exit_code == 2 and "already exists" in again.stderr
    assert copy.read_bytes() == b"an older backup"


def test_restore_refuses_to_lose_newer_events_then_keeps_the_replaced_file(
    lab: Lab, tmp_path: Path
) -> None:
    copy = tmp_path / "copy.sqlite"
    ok_json(invoke("backup", str(copy), db=lab.path, as_json=True))
    backup_head = _head(copy)
    _add_building(lab, "Annex after the backup")
    live_head = _head(lab.path)
    before = lab.path.read_bytes(), counts(lab.path)

    refused = invoke("restore", str(copy), db=lab.path, actor=lab.manager)
    assert refused.exit_code == 1
    assert (
        "1 event(s) newer than the backup" in refused.stderr and "--accept-loss" in refused.stderr
    )
    assert (lab.path.read_bytes(), counts(lab.path)) == before
    assert not list(tmp_path.glob("*.replaced-*")) and not list(
        lab.path.parent.glob("*.replaced-*")
    )

    answer = ok_json(
        invoke("restore", str(copy), "--accept-loss", db=lab.path, actor=lab.manager, as_json=True)
    )
    kept = Path(answer["item"]["replaced_kept_as"])
    assert _mode(kept) == 0o600 and _head(kept) == live_head
    assert answer["item"]["events_lost"] == 1
    seq, _ = _head(lab.path)
    assert seq == backup_head[0] + 1 == answer["event_seq"]  # the restore is itself recorded
    events = ok_json(invoke("ledger", "list", "--limit", "1", db=lab.path, as_json=True))
    assert events[0]["action"] == "database.restored"
    assert events[0]["payload"]["backup_head_hash"] == backup_head[1]


def test_restore_refuses_a_backup_whose_ledger_was_altered(lab: Lab, tmp_path: Path) -> None:
    copy = tmp_path / "copy.sqlite"
    ok_json(invoke("backup", str(copy), db=lab.path, as_json=True))
    connection = sqlite3.connect(copy)
    connection.execute("DROP TRIGGER custody_event_no_update")
    connection.execute("UPDATE custody_event SET payload = replace(payload, 'enamel', 'dentine')")
    connection.commit()
    connection.close()
    before = lab.path.read_bytes()
    result = invoke("restore", str(copy), "--accept-loss", db=lab.path, actor=lab.manager)
    assert result.exit_code == 1
    assert (
        "its ledger is broken at event #" in result.stderr
        and "nothing was replaced" in result.stderr
    )
    assert lab.path.read_bytes() == before


def test_restore_refuses_a_backup_older_than_the_anchor(lab: Lab, tmp_path: Path) -> None:
    copy = tmp_path / "copy.sqlite"
    ok_json(invoke("backup", str(copy), db=lab.path, as_json=True))
    _add_building(lab, "Annex anchored")
    anchor = tmp_path / "head.json"
    ok_json(
        invoke(
            "ledger", "anchor", "--out", str(anchor), db=lab.path, actor=lab.manager, as_json=True
        )
    )
    before = lab.path.read_bytes()
    result = invoke(
        "restore",
        str(copy),
        "--anchor",
        str(anchor),
        "--accept-loss",
        db=lab.path,
        actor=lab.manager,
    )
    assert result.exit_code == 1 and "newest event(s) are gone" in result.stderr
    assert lab.path.read_bytes() == before


def test_restore_replaces_a_damaged_file_and_keeps_its_bytes(lab: Lab, tmp_path: Path) -> None:
    copy = tmp_path / "copy.sqlite"
    ok_json(invoke("backup", str(copy), db=lab.path, as_json=True))
    damaged = tmp_path / "damaged.sqlite"
    damaged.write_bytes(b"SQLite format 3\x00" + b"\x07" * 8000)
    damaged.chmod(0o600)
    answer = ok_json(invoke("restore", str(copy), db=damaged, actor=lab.manager, as_json=True))
    kept = Path(answer["item"]["replaced_kept_as"])
    assert kept.read_bytes() == b"SQLite format 3\x00" + b"\x07" * 8000
    assert _head(damaged)[0] == _head(copy)[0] + 1 and _mode(damaged) == 0o600


def test_restore_into_a_missing_file_makes_a_private_one(lab: Lab, tmp_path: Path) -> None:
    copy = tmp_path / "copy.sqlite"
    ok_json(invoke("backup", str(copy), db=lab.path, as_json=True))
    fresh = tmp_path / "new" / "lab.sqlite"
    fresh.parent.mkdir()
    answer = ok_json(invoke("restore", str(copy), db=fresh, actor=lab.manager, as_json=True))
    assert answer["item"]["replaced_kept_as"] is None and _mode(fresh) == 0o600


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (("restore", "{lab}"), "is the database itself"),
        (("restore", "{notes}"), "is not an SQLite database file"),
        (("restore", "{copy}"), "no operator given"),
    ],
)
def test_restore_refusals_are_one_line_and_change_nothing(
    lab: Lab, tmp_path: Path, args: tuple[str, ...], fragment: str
) -> None:
    copy = tmp_path / "copy.sqlite"
    ok_json(invoke("backup", str(copy), db=lab.path, as_json=True))
    notes = tmp_path / "notes.txt"
    notes.write_text("not a database", encoding="utf-8")
    names = {"lab": str(lab.path), "notes": str(notes), "copy": str(copy)}
    argv = [a.format(**names) for a in args]
    before = lab.path.read_bytes()
    actor = None if fragment == "no operator given" else lab.manager
    result = invoke(*argv, db=lab.path, actor=actor)
    assert result.exit_code == 2 and fragment in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1
    assert lab.path.read_bytes() == before


WRITER = """
import os, sys
from tracker.db.database import open_database
from tracker.services.admin import setup
from tracker.services.admin import keys
db = open_database(sys.argv[1])
key_file = keys.key_to_unlock(db, sys.argv[3])  # a script unlocks its key like the CLI
if key_file is not None:
    keys.unlock_file(db, key_file, os.environ["TRACKER_PASSPHRASE"])
for n in range(int(sys.argv[2])):
    setup.add_location(db, sys.argv[3], {"kind": "building", "name": f"Busy hall {n}"})
db.close()
"""


def test_backups_taken_while_another_process_writes_are_consistent(
    lab: Lab, tmp_path: Path
) -> None:
    writer = subprocess.Popen([sys.executable, "-c", WRITER, str(lab.path), "60", lab.manager])
    heads = []
    try:
        for n in range(4):
            copy = tmp_path / f"busy-{n}.sqlite"
            made = ok_json(invoke("backup", str(copy), db=lab.path, as_json=True))
            assert made["ledger_ok"]
            heads.append(made["head_seq"])
    finally:
        assert writer.wait(timeout=120) == 0
    assert heads == sorted(heads)
    final = _head(lab.path)[0]
    assert all(h <= final for h in heads)


@pytest.mark.postgresql
@pytest.mark.parametrize("db_url", ["postgresql"], indirect=True)
def test_backup_and_restore_name_pg_tools_for_postgresql(db: Database, tmp_path: Path) -> None:
    with pytest.raises(InputError, match="pg_dump"):
        backups.backup(db, tmp_path / "x.sqlite")
    with pytest.raises(InputError, match="pg_restore"):
        backups.restore(db.url, "boss", tmp_path / "x.sqlite")
    assert not (tmp_path / "x.sqlite").exists()
