"""`tracker ledger anchor` and `tracker ledger verify --anchor` on a real file."""

from __future__ import annotations

import json
import sqlite3
from pathlib import Path

from tests.cli.budget_book import validate
from tests.cli.conftest import Lab, invoke, ok_json


def test_anchor_then_verify_passes_and_a_rolled_back_copy_fails(lab: Lab, tmp_path: Path) -> None:
    old_copy = tmp_path / "old.sqlite"
    ok_json(invoke("backup", str(old_copy), db=lab.path, as_json=True))
    ok_json(
        invoke(
            "location", "add", "building", "Annex Q", db=lab.path, actor=lab.manager, as_json=True
        )
    )
    anchor = tmp_path / "head.json"
    written = ok_json(
        invoke(
            "ledger", "anchor", "--out", str(anchor), db=lab.path, actor=lab.manager, as_json=True
        )
    )
    assert json.loads(anchor.read_text())["seq"] == written["seq"]
    validate(json.loads(anchor.read_text()), "anchor.schema.json")

    good = ok_json(invoke("ledger", "verify", "--anchor", str(anchor), db=lab.path, as_json=True))
    assert good["ok"] and good["anchor"]["ok"]

    # The old copy is a perfectly valid chain, one event short of the anchor.
    plain = ok_json(invoke("ledger", "verify", db=old_copy, as_json=True))
    assert plain["ok"] and plain["anchor"] is None
    result = invoke("ledger", "verify", "--anchor", str(anchor), db=old_copy)
    assert result.exit_code == 1
    assert "anchor FAILED" in result.stdout and "1 newest event(s) are gone" in result.stdout


def test_anchor_to_stdout_is_the_anchor_file_itself(lab: Lab) -> None:
    result = invoke("ledger", "anchor", db=lab.path, actor=lab.manager)
    assert result.exit_code == 0
    record = json.loads(result.stdout)
    connection = sqlite3.connect(lab.path)
    seq, digest = connection.execute(
        "SELECT seq, hash FROM custody_event ORDER BY seq DESC LIMIT 1"
    ).fetchone()
    connection.close()
    assert (record["format"], record["seq"], record["hash"]) == ("tracker-anchor/2", seq, digest)
    assert record["signed_by"] == lab.manager


def test_a_file_that_is_not_an_anchor_is_one_line_exit_2(lab: Lab, tmp_path: Path) -> None:
    bogus = tmp_path / "notes.txt"
    bogus.write_text("remember to buy HNO3\n", encoding="utf-8")
    result = invoke("ledger", "verify", "--anchor", str(bogus), db=lab.path)
    assert result.exit_code == 2
    (line,) = result.stderr.strip().splitlines()
    assert line.startswith("error: --anchor: '") and "notes.txt': is not JSON" in line


def test_files_into_a_missing_folder_are_one_line_exit_2(lab: Lab, tmp_path: Path) -> None:
    missing = tmp_path / "no-such-folder"
    for argv in (
        ("ledger", "anchor", "--out", str(missing / "head.json")),
        ("ledger", "export", "--out", str(missing / "ledger.jsonl")),
        ("backup", str(missing / "copy.sqlite")),
    ):
        result = invoke(*argv, db=lab.path)
        assert result.exit_code == 2, (argv, result.stderr)
        (line,) = result.stderr.strip().splitlines()
        assert line.startswith("error: ") and "no-such-folder" in line
    assert not missing.exists()
