"""`tracker` with no command, `--version`, and `ledger export` checked by an independent verifier.

The verifier below is written only from the formats described in the docstring of
tracker/domain/ledger.py: "tracker-ledger/1", eight fields after the format tag, and
"tracker-ledger/2", which adds os_user, host and db_user after the operator; joined by
line feeds, hashed with SHA-256; each prev_hash is the previous hash. Signatures are
checked from tracker/domain/signing.py's docstring: Ed25519 (RFC 8032, through the
``cryptography`` package) over the ASCII hex of the hash, with the public key that an
earlier event's payload ``key`` registered to the event's operator. It uses nothing from
tracker.
"""

from __future__ import annotations

import hashlib
import json
import re
from importlib.metadata import version
from pathlib import Path

import pytest

from tests.cli.conftest import Lab, invoke, ok_json

GENESIS = "0" * 64
FIELDS = ("seq", "at", "operator", "action", "object", "parent", "prev_hash", "payload")
ORIGIN = ("os_user", "host", "db_user")  # format 2, after the operator
SIGNED = ("format", *ORIGIN, "key_id", "signature")
AT = re.compile(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{6}Z")


def first_bad_seq(lines: list[str]) -> int | None:
    """None when the exported chain holds, else the sequence number of the first broken event."""
    expected, prev = 1, GENESIS
    for line in lines:
        record = json.loads(line)
        if record["seq"] != expected:
            return expected
        if record["prev_hash"] != prev:
            return expected
        parts = [record["format"], str(record["seq"]), record["at"], record["operator"]]
        if record["format"] == "tracker-ledger/2":
            parts += [record[name] for name in ORIGIN]
        elif record["format"] != "tracker-ledger/1":
            return expected
        parts += [record[name] for name in FIELDS[3:]]
        if any("\n" in part for part in parts):
            return expected
        if hashlib.sha256("\n".join(parts).encode("utf-8")).hexdigest() != record["hash"]:
            return expected
        expected, prev = expected + 1, record["hash"]
    return None


def first_bad_signature(lines: list[str]) -> int | None:
    """None when every event carries its operator's valid signature, else the first bad one."""
    from cryptography.exceptions import InvalidSignature
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PublicKey

    owners: dict[str, tuple[str, str]] = {}  # key ID -> (operator, public key hex)
    for line in lines:
        record = json.loads(line)
        payload = json.loads(record["payload"])
        key = payload.get("key") if isinstance(payload, dict) else None
        if record["action"] in ("ledger.opened", "operator.added", "key.registered") and key:
            owners[key["id"]] = (key["operator"], key["public_key"])
        owner, public_hex = owners.get(record["key_id"], ("", ""))
        if owner != record["operator"]:
            return int(record["seq"])
        public = Ed25519PublicKey.from_public_bytes(bytes.fromhex(public_hex))
        try:
            public.verify(bytes.fromhex(record["signature"]), record["hash"].encode("ascii"))
        except (InvalidSignature, ValueError):
            return int(record["seq"])
        if record["action"] == "key.revoked":
            owners.pop(payload["key_id"], None)
    return None


def export(lab: Lab, target: Path) -> list[str]:
    result = invoke("ledger", "export", "--out", str(target), db=lab.path)
    assert result.exit_code == 0, result.stderr
    lines = target.read_text(encoding="utf-8").splitlines()
    assert f"exported {len(lines)} events to {target}" in " ".join(result.stdout.split())
    return lines


def test_no_command_prints_the_overview(lab: Lab) -> None:
    result = invoke(db=lab.path)
    assert result.exit_code == 0, result.stderr
    assert "Loans, most urgent first" in result.stdout and "FH-77" in result.stdout
    bare = ok_json(invoke(db=lab.path, as_json=True))
    assert bare == ok_json(invoke("overview", db=lab.path, as_json=True))
    assert [line["reference"] for line in bare] == ["FH-77"]


def test_version(tmp_path: Path) -> None:
    result = invoke("--version", db=tmp_path / "never-created.sqlite")
    assert result.exit_code == 0
    assert result.stdout.strip() == f"tracker {version('tracker')}"
    assert not (tmp_path / "never-created.sqlite").exists()


def test_export_is_accepted_by_an_independent_verifier(lab: Lab, tmp_path: Path) -> None:
    lines = export(lab, tmp_path / "ledger.jsonl")
    assert first_bad_seq(lines) is None
    assert first_bad_signature(lines) is None
    records = [json.loads(line) for line in lines]
    assert [r["seq"] for r in records] == list(range(1, len(records) + 1))
    for record in records:
        assert set(record) == {*FIELDS, *SIGNED, "hash"}
        assert record["format"] == "tracker-ledger/2" and record["db_user"] == ""  # SQLite
        assert AT.fullmatch(record["at"]), record["at"]
        payload = record["payload"]  # stored canonical: keys sorted, no spaces
        canonical = json.dumps(
            json.loads(payload), sort_keys=True, separators=(",", ":"), ensure_ascii=False
        )
        assert payload == canonical
    report = ok_json(invoke("ledger", "verify", db=lab.path, as_json=True))
    assert (report["events"], report["head_hash"]) == (len(records), records[-1]["hash"])
    assert records[0]["action"] == "ledger.opened" and records[0]["prev_hash"] == GENESIS


@pytest.mark.parametrize("field", ["payload", "operator", "at", "hash", "os_user", "host"])
def test_the_verifier_rejects_one_altered_line(lab: Lab, tmp_path: Path, field: str) -> None:
    lines = export(lab, tmp_path / "ledger.jsonl")
    k = len(lines) // 2
    record = json.loads(lines[k])
    text = record[field] or "x"  # an empty field (an unnamed OS user) gets a character
    i = next(n for n, ch in enumerate(text) if ch.isalnum() and ch not in "0Z")
    record[field] = text[:i] + ("0" if text[i] != "0" else "1") + text[i + 1 :]
    altered = [*lines[:k], json.dumps(record, ensure_ascii=False), *lines[k + 1 :]]
    # Whatever field changed, the recomputed hash of that very line no longer matches.
    assert first_bad_seq(altered) == record["seq"]


def test_the_verifier_rejects_one_altered_signature(lab: Lab, tmp_path: Path) -> None:
    lines = export(lab, tmp_path / "ledger.jsonl")
    k = len(lines) // 2
    record = json.loads(lines[k])
    signature = record["signature"]
    record["signature"] = signature[:10] + ("0" if signature[10] != "0" else "1") + signature[11:]
    altered = [*lines[:k], json.dumps(record, ensure_ascii=False), *lines[k + 1 :]]
    assert first_bad_seq(altered) is None  # the hashes still hold: the signature is not hashed
    assert first_bad_signature(altered) == record["seq"]


def test_the_verifier_rejects_a_dropped_line(lab: Lab, tmp_path: Path) -> None:
    lines = export(lab, tmp_path / "ledger.jsonl")
    k = len(lines) // 2
    assert first_bad_seq(lines[:k] + lines[k + 1 :]) == k + 1


def test_export_to_a_file_with_json_prints_one_document(lab: Lab, tmp_path: Path) -> None:
    target = tmp_path / "ledger.jsonl"
    answer = ok_json(invoke("ledger", "export", "--out", str(target), db=lab.path, as_json=True))
    assert answer["events"] == len(target.read_text(encoding="utf-8").splitlines())
