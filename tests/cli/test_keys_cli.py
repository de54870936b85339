"""Signing keys through the command line: making, registering, unlocking, refusing.

Each refusal is one line, exit 1 or 2, and writes nothing (the database's counts and, for a
restore, its bytes are compared). Keys here are unlocked the way a person's are: from the key
files in the config folder, with the passphrase typed (stdin) or given to a script.
"""

from __future__ import annotations

import json
import stat
from collections.abc import Iterator
from pathlib import Path

import pytest
from typer.testing import Result

from tests import keys
from tests.cli.conftest import Lab, counts, invoke, ok_json
from tracker.db import keyfiles
from tracker.db.keyring import PROCESS
from tracker.domain.signing import key_id, public_hex_of

KEY_FROM_ENV = ("TRACKER_PASSPHRASE", "TRACKER_PASSPHRASE_FILE")


@pytest.fixture
def locked(monkeypatch: pytest.MonkeyPatch) -> Iterator[None]:
    """Nothing unlocked in this process: every command opens its key file as a person would."""
    PROCESS.forget()
    yield
    PROCESS.forget()


def refused(result: Result, code: int) -> str:
    assert result.exit_code == code, (result.exit_code, result.stderr)
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, lines
    return lines[0]


def add_building(lab: Lab, name: str, actor: str | None = None) -> Result:
    return invoke(
        "location", "add", "building", name, db=lab.path, actor=actor or lab.manager, as_json=True
    )


def test_init_makes_a_private_key_file_whose_key_signs_event_one(tmp_path: Path) -> None:
    made = ok_json(
        invoke(
            "init",
            "--code",
            "odile",
            "--name",
            "Odile Farrant",
            db=tmp_path / "n.sqlite",
            as_json=True,
        )
    )
    key_file = Path(made["key_file"])
    assert stat.S_IMODE(key_file.stat().st_mode) == 0o600
    assert stat.S_IMODE(key_file.parent.stat().st_mode) & 0o077 == 0
    assert b"ENCRYPTED PRIVATE KEY" in key_file.read_bytes()  # PKCS #8, encrypted (RFC 5958)
    exported = invoke("ledger", "export", db=tmp_path / "n.sqlite")
    first = json.loads(exported.stdout.splitlines()[0])
    assert first["key_id"] == made["key_id"] == json.loads(first["payload"])["key"]["id"]


def test_a_wrong_passphrase_is_one_line_and_writes_nothing(
    lab: Lab, locked: None, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("TRACKER_PASSPHRASE", "not the passphrase at all")
    before = counts(lab.path)
    line = refused(add_building(lab, "Annex W"), 2)
    assert line.startswith("error: passphrase: does not unlock ysolde's key ")
    assert counts(lab.path) == before


def test_the_passphrase_is_asked_for_hidden_when_no_script_gives_it(
    lab: Lab, locked: None, monkeypatch: pytest.MonkeyPatch
) -> None:
    from typer.testing import CliRunner

    from tracker.cli import app

    for name in KEY_FROM_ENV:
        monkeypatch.delenv(name, raising=False)
    argv = [
        "--db",
        str(lab.path),
        "--as",
        lab.manager,
        "--json",
        "location",
        "add",
        "building",
        "Annex typed",
    ]
    result = CliRunner().invoke(app, argv, input=keys.PASSPHRASE + "\n")
    assert result.exit_code == 0, result.stderr
    assert keys.PASSPHRASE not in result.stdout + result.stderr  # hidden input
    assert json.loads(result.stdout)["item"]["path"] == "Annex typed"


def test_a_key_file_others_may_read_is_refused_before_it_is_read(lab: Lab, locked: None) -> None:
    (key_file,) = keyfiles.key_files(lab.manager)
    key_file.path.chmod(0o644)
    try:
        before = counts(lab.path)
        line = refused(add_building(lab, "Annex R"), 2)
        assert line.startswith("error: key file: '") and line.endswith(
            f"may be read by others (mode 0644); make it private first: chmod 600 {key_file.path}"
        )
        assert counts(lab.path) == before
    finally:
        key_file.path.chmod(0o600)


def test_a_passphrase_file_for_scripts_must_be_private(
    lab: Lab, locked: None, monkeypatch: pytest.MonkeyPatch, tmp_path: Path
) -> None:
    secret = tmp_path / "passphrase"
    secret.write_text(keys.PASSPHRASE + "\n", encoding="utf-8")
    secret.chmod(0o640)
    monkeypatch.delenv("TRACKER_PASSPHRASE")
    monkeypatch.setenv("TRACKER_PASSPHRASE_FILE", str(secret))
    before = counts(lab.path)
    assert "TRACKER_PASSPHRASE_FILE" in refused(add_building(lab, "Annex F"), 2)
    assert counts(lab.path) == before
    secret.chmod(0o600)
    assert ok_json(add_building(lab, "Annex F"))["item"]["path"] == "Annex F"


def test_a_key_made_but_not_registered_is_unknown_and_signs_nothing(
    lab: Lab, locked: None, tmp_path: Path
) -> None:
    made = ok_json(
        invoke("key", "new", "--out", str(tmp_path / "k.pub"), actor="wynn", as_json=True)
    )
    ok_json(
        invoke(
            "operator",
            "add",
            "wynn",
            "--name",
            "Wynn Tallis",
            db=lab.path,
            actor=lab.manager,
            as_json=True,
        )
    )
    before = counts(lab.path)
    line = refused(add_building(lab, "Annex U", actor="wynn"), 1)
    assert f"key {made['key_id']} is not registered in this ledger" in line
    assert counts(lab.path) == before
    # a manager registers it; the public key file holds exactly the key made
    public = (tmp_path / "k.pub").read_bytes()
    assert key_id(public_hex_of(public)) == made["key_id"]
    ok_json(
        invoke(
            "key",
            "register",
            "wynn",
            str(tmp_path / "k.pub"),
            db=lab.path,
            actor=lab.manager,
            as_json=True,
        )
    )
    assert ok_json(add_building(lab, "Annex U", actor="wynn"))["item"]["path"] == "Annex U"


def test_a_revoked_key_is_refused_and_a_new_one_takes_over(
    lab: Lab, locked: None, tmp_path: Path
) -> None:
    revoked = ok_json(
        invoke(
            "key",
            "revoke",
            lab.technician,
            "--reason",
            "passphrase forgotten",
            db=lab.path,
            actor=lab.manager,
            as_json=True,
        )
    )
    before = counts(lab.path)
    argv = ("move", lab.powder, "--to", lab.box)
    line = refused(invoke(*argv, db=lab.path, actor=lab.technician), 1)
    assert f"was revoked at event #{revoked['event_seq']} (passphrase forgotten)" in line
    assert counts(lab.path) == before
    public = tmp_path / "new.pub"
    ok_json(invoke("key", "new", "--out", str(public), actor=lab.technician, as_json=True))
    ok_json(
        invoke(
            "key",
            "register",
            lab.technician,
            str(public),
            db=lab.path,
            actor=lab.manager,
            as_json=True,
        )
    )
    listed = ok_json(invoke("key", "list", db=lab.path, as_json=True))
    mine = [k for k in listed if k["operator"] == lab.technician]
    assert [k["revoked_event"] is not None for k in mine] == [True, False]
    assert ok_json(invoke("ledger", "verify", db=lab.path, as_json=True))["ok"]


def test_a_technician_cannot_make_a_manager_event_from_the_command_line(lab: Lab) -> None:
    before = counts(lab.path)
    for argv, field in (
        (("operator", "add", "eve", "--name", "Eve Intruder", "--role", "manager"), "--as"),
        (("operator", "role", lab.technician, "manager", "--reason", "promote myself"), "--as"),
        (("key", "revoke", lab.manager, "--reason", "lock the boss out"), "--as"),
        (("ledger", "anchor"), "--as"),
    ):
        line = refused(invoke(*argv, db=lab.path, actor=lab.technician), 1)
        assert line.startswith(f"error: {field}: '{lab.technician}': ") and "manager" in line
    assert counts(lab.path) == before


def test_a_restore_that_loses_events_needs_a_manager(lab: Lab, tmp_path: Path) -> None:
    copy = tmp_path / "copy.sqlite"
    ok_json(invoke("backup", str(copy), db=lab.path, as_json=True))
    ok_json(add_building(lab, "Annex newer"))
    before = lab.path.read_bytes()
    argv = ("restore", str(copy), "--accept-loss")
    line = refused(invoke(*argv, db=lab.path, actor=lab.technician), 1)
    assert line.startswith(f"error: --as: '{lab.technician}': a restore that loses 1 event(s) ")
    assert lab.path.read_bytes() == before and not list(tmp_path.glob("*.replaced-*"))
    done = ok_json(invoke(*argv, db=lab.path, actor=lab.manager, as_json=True))
    assert done["item"]["events_lost"] == 1
    assert ok_json(invoke("ledger", "verify", db=lab.path, as_json=True))["ok"]


def test_a_forged_anchor_for_a_rewritten_ledger_is_refused(lab: Lab, tmp_path: Path) -> None:
    """Anyone can write an unsigned anchor of any head, or sign one with a technician's key:
    `verify --anchor` accepts only a manager's signature, checked against the ledger."""
    genuine = tmp_path / "genuine.json"
    ok_json(
        invoke(
            "ledger", "anchor", "--out", str(genuine), db=lab.path, actor=lab.manager, as_json=True
        )
    )
    assert invoke("ledger", "verify", "--anchor", str(genuine), db=lab.path).exit_code == 0
    record = json.loads(genuine.read_text(encoding="utf-8"))
    unsigned = {k: record[k] for k in ("seq", "hash", "first_hash", "taken_at")}
    forged = tmp_path / "forged.json"
    forged.write_text(json.dumps({"format": "tracker-anchor/1", **unsigned}), encoding="utf-8")
    result = invoke("ledger", "verify", "--anchor", str(forged), db=lab.path)
    assert result.exit_code == 1 and "anchor FAILED: the anchor is unsigned" in result.stdout
    altered = dict(record, label="a different story")
    forged.write_text(json.dumps(altered), encoding="utf-8")
    result = invoke("ledger", "verify", "--anchor", str(forged), db=lab.path)
    assert result.exit_code == 1 and "signature does not match its contents" in result.stdout
