"""The documents' promises hold: two Quick-start commands in the README, CI runs the second,
the ledger page's verification recipes work, the labels page names real stocks and commands."""

from __future__ import annotations

import json
import re
import subprocess
import sys
from pathlib import Path

import pytest

from tests import factories as make
from tests.conftest import TickingClock, seed
from tracker.db.database import open_database
from tracker.services.ledger import chain

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _page(name: str) -> str:
    """A page of docs/, whole."""
    return (ROOT / "docs" / name).read_text(encoding="utf-8")


def _section(title: str) -> str:
    match = re.search(rf"^## {title}\n(.*?)(?=^## )", README, flags=re.S | re.M)
    assert match, f"README has no '## {title}' section"
    return match.group(1)


def _blocks(text: str, language: str) -> list[str]:
    return re.findall(rf"```{language}\n(.*?)```", text, flags=re.S)


def test_quick_start_is_exactly_two_commands() -> None:
    commands = [block.strip() for block in _blocks(_section("Quick start"), "bash")]
    assert len(commands) == 2
    assert all("\n" not in command for command in commands)
    assert commands[0].endswith("tracker demo")
    assert commands[1].endswith("python -m pytest")


def test_ci_runs_the_readme_test_command_verbatim() -> None:
    test_command = _blocks(_section("Quick start"), "bash")[1].strip()
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert test_command in ci.splitlines()
    assert "TRACKER_REQUIRE_PG=1" in ci  # PostgreSQL tests may not be skipped in CI


def _recipe(tmp_path: Path, marker: str) -> Path:
    """The ledger page's Python block that uses ``marker``, written out as a script."""
    blocks = [b for b in _blocks(_page("ledger.md"), "python") if marker in b]
    assert len(blocks) == 1
    script = tmp_path / f"recipe-{len(list(tmp_path.glob('recipe-*')))}.py"
    script.write_text(blocks[0], encoding="utf-8")
    return script


def _exported(tmp_path: Path) -> tuple[Path, int, str]:
    """A real export: a seeded lab with a loan and a drilled powder."""
    seed(str(tmp_path / "l.sqlite"))
    db = open_database(tmp_path / "l.sqlite", clock=TickingClock())
    make.powder(db, make.specimen(db, make.loan(db)), mg="1.500")
    export = tmp_path / "ledger.jsonl"
    with export.open("w", encoding="utf-8") as handle:
        count = chain.export_jsonl(db, handle)
    head = chain.verify(db).head_hash
    db.close()
    return export, count, head


def _run(script: Path, export: Path) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, str(script), str(export)], capture_output=True, text=True
    )


def test_ledger_page_verification_recipe_accepts_an_export_and_rejects_tampering(
    tmp_path: Path,
) -> None:
    script = _recipe(tmp_path, "hashlib")
    assert len(script.read_text(encoding="utf-8").splitlines()) <= 20
    export, count, head = _exported(tmp_path)

    good = _run(script, export)
    assert good.returncode == 0, good.stderr
    assert f"intact: {count} events, head {head}" in good.stdout

    lines = export.read_text(encoding="utf-8").splitlines()
    lines[3] = lines[3].replace("Test loan", "Test lean")
    export.write_text("\n".join(lines) + "\n", encoding="utf-8")
    bad = _run(script, export)
    assert bad.returncode != 0 and "broken at event 4" in bad.stderr

    export.write_text("", encoding="utf-8")  # a ledger with no first event is not intact
    empty = _run(script, export)
    assert empty.returncode != 0 and "no events" in empty.stderr


def test_ledger_page_signature_recipe_accepts_an_export_and_rejects_one_altered_signature(
    tmp_path: Path,
) -> None:
    script = _recipe(tmp_path, "Ed25519PublicKey")
    export, count, _ = _exported(tmp_path)

    good = _run(script, export)
    assert good.returncode == 0, good.stderr
    assert f"signatures valid: {count} signed, 0 unsigned" in good.stdout

    lines = export.read_text(encoding="utf-8").splitlines()
    record = json.loads(lines[4])
    flipped = "1" if record["signature"][0] == "0" else "0"
    record["signature"] = flipped + record["signature"][1:]
    lines[4] = json.dumps(record, ensure_ascii=False)
    export.write_text("\n".join(lines) + "\n", encoding="utf-8")
    bad = _run(script, export)
    assert bad.returncode != 0
    assert f"event {record['seq']}: the signature does not match" in bad.stderr


def test_labels_page_names_real_stocks_commands_and_a_valid_stock_file(
    tmp_path: Path,
) -> None:
    import tomllib

    import typer
    from typer.core import TyperGroup

    from tests.cli.conftest import subcommands
    from tracker.cli import app
    from tracker.output.stocks import entries, load_stock

    section = _page("labels.md")
    (example,) = _blocks(section, "toml")
    path = tmp_path / "stocks.toml"
    path.write_text(example, encoding="utf-8")
    for name in tomllib.loads(example)["stock"]:
        assert load_stock(name, path).per_sheet > 1  # the example is a valid sheet stock
    named = set(re.findall(r"`([a-z0-9-]+)`", section)) & set(entries())
    assert named == set(entries())  # every preset is documented by its real name
    cli = typer.main.get_command(app)
    assert isinstance(cli, TyperGroup)
    labels_group = subcommands(cli)["labels"]
    assert isinstance(labels_group, TyperGroup)
    for command in re.findall(r"^tracker labels ([a-z-]+)", _blocks(section, "bash")[0], re.M):
        assert command in subcommands(labels_group)


def test_the_reliability_page_keeps_its_prose_when_a_run_writes_its_table(tmp_path: Path) -> None:
    from tests.reliability import report

    page = tmp_path / "reliability.md"
    page.write_text(_page("reliability.md"), encoding="utf-8")
    before = page.read_text(encoding="utf-8")
    prose_before, _, rest = before.partition(report.BEGIN)
    _, _, prose_after = rest.partition(report.END)
    assert "--reliability-page=docs/reliability.md" in prose_before  # the command, on top
    assert "How the tests work" in prose_after

    rows = dict(report.ROWS)
    report.ROWS.clear()
    try:
        report.record("an invented test", "3 cases", "all refused")
        report.write_page(page)
    finally:
        report.ROWS.clear()
        report.ROWS.update(rows)
    after = page.read_text(encoding="utf-8")
    assert after == (
        f"{prose_before}{report.BEGIN}\n{report.measured_code()}\n\n"
        "| test | size | found |\n|---|---|---|\n"
        f"| an invented test | 3 cases | all refused |\n{report.END}{prose_after}"
    )
    assert report.measured_code().startswith("Measured by the tests of commit ")

    page.write_text("# a page without the markers\n", encoding="utf-8")
    with pytest.raises(ValueError, match="no table between"):
        report.write_page(page)


def test_reliability_rows_kept_by_one_run_join_the_next_run_s_table(tmp_path: Path) -> None:
    """CI's everyday suite keeps its rows; the slow suite adds its own and writes the page."""
    from tests.reliability import report

    kept = tmp_path / "rows.json"
    rows = dict(report.ROWS)
    report.ROWS.clear()
    try:
        report.record("an everyday test", "2 cases", "both refused")
        report.save_rows(kept)
        report.ROWS.clear()
        report.record("a slow test", "9 kills", "nothing half-written")
        report.load_rows(kept)
        assert report.table().splitlines()[2:] == [
            "| a slow test | 9 kills | nothing half-written |",
            "| an everyday test | 2 cases | both refused |",
        ]
    finally:
        report.ROWS.clear()
        report.ROWS.update(rows)
