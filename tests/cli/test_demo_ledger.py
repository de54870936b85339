"""The "done when" checks: the demo database, its lineage, and tamper detection in the file."""

from __future__ import annotations

import json
import re
import sqlite3
import tomllib
from collections import defaultdict
from decimal import Decimal
from pathlib import Path
from typing import Any

import pytest
from typer.testing import CliRunner

from tests.cli.conftest import CLEAN_ENV, checkpoint, copy_sqlite, invoke, ok_json
from tracker.cli import app, state

SCENARIO = Path(__file__).resolve().parents[2] / "demo_db" / "scenario.toml"


def scenario_steps() -> list[dict[str, Any]]:
    with SCENARIO.open("rb") as handle:
        steps: list[dict[str, Any]] = tomllib.load(handle)["steps"]
    return steps


def verify_json(db: Path) -> tuple[int, dict[str, Any]]:
    result = invoke("ledger", "verify", db=db, as_json=True)
    return result.exit_code, dict(json.loads(result.stdout))


def test_demo_builds_the_scenario_and_prints_an_overview(tmp_path: Path) -> None:
    steps = scenario_steps()
    loans = {step["args"]["reference"] for step in steps if step["do"] == "loan"}
    out = tmp_path / "demo.sqlite"
    result = invoke("demo", "--out", str(out))
    assert result.exit_code == 0, result.stderr
    assert out.exists()
    assert "Loans, most urgent first" in result.stdout
    for reference in loans:
        assert reference in result.stdout
    assert f"({len(steps)} steps" in " ".join(result.stderr.split())
    assert "invented" in result.stderr

    overview = ok_json(invoke("overview", db=out, as_json=True))
    assert {line["reference"] for line in overview} == loans
    code, report = verify_json(out)
    # One event opens the ledger, then every scenario step records exactly one.
    assert (code, report["ok"], report["events"]) == (0, True, len(steps) + 1)


def test_demo_with_json_prints_one_document(tmp_path: Path) -> None:
    result = invoke("demo", "--out", str(tmp_path / "d.sqlite"), as_json=True)
    lines = ok_json(result)
    assert isinstance(lines, list) and all("reference" in line for line in lines)


def test_demo_is_deterministic(demo_db: Path, tmp_path: Path) -> None:
    again = tmp_path / "again.sqlite"
    assert invoke("demo", "--out", str(again)).exit_code == 0
    first, second = verify_json(demo_db)[1], verify_json(again)[1]
    assert first["head_hash"] == second["head_hash"]
    assert re.fullmatch(r"[0-9a-f]{64}", first["head_hash"])
    exports = []
    for db in (demo_db, again):
        target = tmp_path / f"{db.stem}.jsonl"
        assert invoke("ledger", "export", "--out", str(target), db=db).exit_code == 0
        exports.append(target.read_bytes())
    assert exports[0] == exports[1]


def test_show_gives_lineage_down_to_aliquots(demo_db: Path) -> None:
    # Build the expected tree from the ledger, then compare it with `show`'s lineage.
    children: dict[str, set[str]] = defaultdict(set)
    for action in ("powder.drilled", "solution.dissolved", "aliquot.taken"):
        events = ok_json(
            invoke(
                "ledger", "list", "--limit", "100000", "--action", action, as_json=True, db=demo_db
            )
        )
        assert events, action
        for event in events:
            children[event["parent"]].add(event["object"])
    specimens = sorted(p for p in children if p.startswith("SP-"))
    aliquots_seen = 0
    for specimen in specimens:
        item = ok_json(invoke("show", specimen, db=demo_db, as_json=True))["item"]
        assert (item["id"], item["kind"]) == (specimen, "specimen")
        assert {n["id"] for n in item["children"]} == children[specimen]
        for powder in item["children"]:
            facts = powder["facts"]
            # measured values are their digits: exact sums, by hand
            taken = sum(Decimal(s["facts"]["powder_mass_mg"]) for s in powder["children"])
            left = Decimal(facts["mass_mg"]) - taken
            assert facts["remaining_mg"] == pytest.approx(float(left), abs=1e-9)
            assert {n["id"] for n in powder["children"]} == children[powder["id"]]
            for solution in powder["children"]:
                facts = solution["facts"]
                used = sum(Decimal(a["facts"]["mass_g"]) for a in solution["children"])
                left = Decimal(facts["solution_mass_g"]) - used
                assert facts["remaining_g"] == pytest.approx(float(left))
                assert {n["id"] for n in solution["children"]} == children[solution["id"]]
                for aliquot in solution["children"]:
                    assert aliquot["kind"] == "aliquot" and Decimal(aliquot["facts"]["mass_g"]) > 0
                    aliquots_seen += 1
    assert aliquots_seen == sum(len(v) for k, v in children.items() if k.startswith("SO-"))
    assert aliquots_seen > 0


def _one_payload(db: Path, action: str) -> tuple[int, str]:
    """The sequence number and stored payload of a mid-ledger event of this action."""
    connection = sqlite3.connect(db)
    try:
        rows = connection.execute(
            "SELECT seq, payload FROM custody_event WHERE action = ? ORDER BY seq", (action,)
        ).fetchall()
    finally:
        connection.close()
    assert len(rows) >= 3
    seq, payload = rows[len(rows) // 2]
    return int(seq), str(payload)


def _assert_verify_names(db: Path, seq: int) -> None:
    plain = invoke("ledger", "verify", db=db)
    assert plain.exit_code == 1
    assert f"BROKEN at event #{seq}:" in plain.stdout
    code, report = verify_json(db)
    assert code == 1 and report["ok"] is False
    assert report["broken_seq"] == seq and report["events"] == seq - 1


def test_one_flipped_byte_in_the_file_is_found(demo_db: Path, tmp_path: Path) -> None:
    db = copy_sqlite(demo_db, tmp_path / "tampered.sqlite")
    assert invoke("ledger", "verify", db=db).exit_code == 0
    seq, payload = _one_payload(db, "powder.drilled")
    checkpoint(db)  # every row now lives in the main file; all connections are closed

    data = db.read_bytes()
    needle = payload.encode("utf-8")
    assert data.count(needle) == 1, "the payload must occur exactly once in the file"
    key = '"gross_mg":"'  # a measured value: its digits, as a string
    offset = data.index(needle) + len(payload[: payload.index(key) + len(key)].encode("utf-8"))
    digit = data[offset : offset + 1]
    assert digit.isdigit()
    with db.open("r+b") as handle:  # edit the bytes in place, same length
        handle.seek(offset)
        handle.write(str((int(digit) + 1) % 10).encode())

    assert _one_payload(db, "powder.drilled") != (seq, payload)  # the live row changed
    _assert_verify_names(db, seq)


def test_an_update_behind_the_triggers_back_is_found(demo_db: Path, tmp_path: Path) -> None:
    db = copy_sqlite(demo_db, tmp_path / "updated.sqlite")
    seq, payload = _one_payload(db, "specimen.checked_in")
    altered = payload.replace("complete", "comp1ete", 1)
    assert altered != payload and len(altered) == len(payload)
    connection = sqlite3.connect(db)
    try:
        with pytest.raises(sqlite3.DatabaseError, match="append-only"):
            connection.execute("UPDATE custody_event SET payload = ? WHERE seq = ?", (altered, seq))
        connection.execute("DROP TRIGGER custody_event_no_update")
        connection.execute("UPDATE custody_event SET payload = ? WHERE seq = ?", (altered, seq))
        connection.commit()
    finally:
        connection.close()
    _assert_verify_names(db, seq)


def test_a_deleted_event_is_found(demo_db: Path, tmp_path: Path) -> None:
    db = copy_sqlite(demo_db, tmp_path / "deleted.sqlite")
    seq, _ = _one_payload(db, "aliquot.taken")
    connection = sqlite3.connect(db)
    try:
        with pytest.raises(sqlite3.DatabaseError, match="append-only"):
            connection.execute("DELETE FROM custody_event WHERE seq = ?", (seq,))
        connection.execute("DROP TRIGGER custody_event_no_delete")
        connection.execute("DELETE FROM custody_event WHERE seq = ?", (seq,))
        connection.commit()
    finally:
        connection.close()
    _assert_verify_names(db, seq)


def test_the_command_the_demo_suggests_works(tmp_path: Path) -> None:
    out = tmp_path / "hint.sqlite"
    result = invoke("demo", "--out", str(out))
    hint = re.search(r"explore it: tracker --db \S+ show (\S+)", " ".join(result.stderr.split()))
    assert hint is not None, result.stderr
    shown = invoke("show", hint[1], db=out)
    assert shown.exit_code == 0, shown.stderr


def test_the_demo_run_again_without_out_builds_a_second_file_beside_the_first(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    first = invoke("demo", "--no-open")
    assert first.exit_code == 0, first.stderr
    built = tmp_path / "tracker-demo.sqlite"
    before = built.read_bytes()
    second = invoke("demo", "--no-open")
    assert second.exit_code == 0, second.stderr
    assert "tracker-demo-2.sqlite" in " ".join(second.stderr.split())
    assert built.read_bytes() == before  # the first demo is never replaced
    assert verify_json(tmp_path / "tracker-demo-2.sqlite")[0] == 0


def test_the_demo_is_built_in_the_database_named_by_db_or_tracker_db(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    named = tmp_path / "named.sqlite"
    built = invoke("demo", "--no-open", db=named)
    assert built.exit_code == 0, built.stderr
    assert verify_json(named)[0] == 0
    assert not (tmp_path / "tracker-demo.sqlite").exists()  # not beside it as well

    from_env = tmp_path / "from-env.sqlite"
    env = {**CLEAN_ENV, "TRACKER_DB": str(from_env)}
    result = CliRunner().invoke(app, ["demo", "--no-open"], env=env, catch_exceptions=False)
    assert result.exit_code == 0, result.stderr
    assert verify_json(from_env)[0] == 0 and not (tmp_path / "tracker-demo.sqlite").exists()


@pytest.mark.parametrize("kind", ["existing file", "server database"])
def test_the_demo_refuses_a_db_it_would_replace_or_cannot_build(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, kind: str
) -> None:
    monkeypatch.chdir(tmp_path)
    lab = tmp_path / "lab.sqlite"
    lab.write_bytes(b"a lab's database")
    named = str(lab) if kind == "existing file" else "postgresql://lab@db.example/tracker"
    result = invoke("demo", "--no-open", db=named)
    assert result.exit_code == 2
    (line,) = result.stderr.strip().splitlines()
    assert line.startswith("error: --db: "), line
    refusal = json.loads(invoke("demo", "--no-open", db=named, as_json=True).stdout)
    assert (refusal["field"], refusal["value"]) == ("--db", named)
    assert lab.read_bytes() == b"a lab's database"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["lab.sqlite"]  # nothing written


@pytest.mark.parametrize(
    ("argv0", "on_path", "said"),
    [
        (".venv/bin/tracker", False, ".venv/bin/tracker"),  # the virtualenv not activated
        ("tracker", True, "tracker"),
        ("/usr/lib/python3/tracker/__main__.py", False, "tracker"),  # python -m tracker
    ],
)
def test_the_hint_says_tracker_as_the_shell_will_find_it(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, argv0: str, on_path: bool, said: str
) -> None:
    program = tmp_path / ".venv" / "bin" / "tracker"
    program.parent.mkdir(parents=True)
    program.write_text("#!/bin/sh\n")
    program.chmod(0o755)
    monkeypatch.chdir(tmp_path)
    monkeypatch.setenv("PATH", str(program.parent) if on_path else str(tmp_path / "nowhere"))
    monkeypatch.setattr("sys.argv", [str(program) if on_path else argv0])
    assert state.program() == said  # the demo's "explore it: … --db …" hint starts so
