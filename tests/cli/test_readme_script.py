"""The README's everyday-use script, run line by line on a fresh database.

Each line is expanded by bash exactly as a person's shell would (quotes, ``~``, ``$(date
+%F)``, comments), then a ``tracker`` line runs in this process through the CLI app, an
``export`` line sets what the following lines see, and any other line runs in bash. Every
line must exit 0; afterwards the files the README promises exist and the database holds
what the script recorded, its ledger and books intact.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from tests.cli.conftest import CLEAN_ENV, counts
from tracker.cli import app
from tracker.db.database import open_database
from tracker.services.ledger import chain

ROOT = Path(__file__).resolve().parents[2]


def script_lines() -> list[str]:
    """The bash block of the README's "Everyday use" section, continuation lines joined."""
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    section = re.search(r"^## Everyday use\n(.*?)(?=^## )", readme, flags=re.S | re.M)
    assert section, "README has no '## Everyday use' section"
    (block,) = re.findall(r"```bash\n(.*?)```", section.group(1), flags=re.S)
    return [line for line in block.replace("\\\n", " ").splitlines() if line.strip()]


def bash(command: str, env: dict[str, str], cwd: Path) -> subprocess.CompletedProcess[bytes]:
    return subprocess.run(["bash", "-c", command], env=env, cwd=cwd, capture_output=True)


def expanded(line: str, env: dict[str, str], cwd: Path) -> list[str]:
    """The words of ``tracker ARGS`` after the shell's expansion, without the program."""
    done = bash(f"set -e; printf '%s\\0' {line.removeprefix('tracker ')}", env, cwd)
    assert done.returncode == 0, (line, done.stderr)
    return done.stdout.decode("utf-8").split("\0")[:-1]


def exported(line: str, env: dict[str, str], cwd: Path) -> dict[str, str]:
    """The environment after an ``export`` line, as bash leaves it."""
    done = bash(f"set -e; {line}; env -0", env, cwd)
    assert done.returncode == 0, (line, done.stderr)
    pairs = (item.split("=", 1) for item in done.stdout.decode("utf-8").split("\0") if item)
    return dict(pair for pair in pairs if len(pair) == 2)


def tracker_env(env: dict[str, str]) -> dict[str, str | None]:
    """What the CLI sees: the script's TRACKER_* variables over the suite's clean slate."""
    chosen: dict[str, str | None] = dict(CLEAN_ENV)
    chosen.update({k: v for k, v in env.items() if k.startswith("TRACKER_")})
    return chosen


def test_the_readme_script_runs_on_a_fresh_database(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    from typer.testing import CliRunner

    home = tmp_path / "home"
    home.mkdir()
    shutil.copytree(ROOT / "docs" / "examples", tmp_path / "docs" / "examples")
    monkeypatch.chdir(tmp_path)
    env = {k: v for k, v in os.environ.items() if k not in CLEAN_ENV}
    env["HOME"] = str(home)  # the script's ~/lab/ lands here
    env["TRACKER_CONFIG_DIR"] = str(tmp_path / "config")  # its keys too, never the suite's

    lines = script_lines()
    assert lines[0].startswith("export TRACKER_DB=")
    for line in lines:
        if line.startswith("export "):
            env = exported(line, env, tmp_path)
        elif line.startswith("tracker "):
            argv = expanded(line, env, tmp_path)
            result = CliRunner().invoke(app, argv, env=tracker_env(env), catch_exceptions=False)
            assert result.exit_code == 0, (line, result.stdout, result.stderr)
        else:
            done = bash(line, env, tmp_path)
            assert done.returncode == 0, (line, done.stderr)

    assert (home / "lab" / "tracker.sqlite").is_file()
    for name in ("labels.pdf", "kestrel-return.pdf", "kestrel-return.pdf.anchor.json"):
        assert (tmp_path / name).stat().st_size > 0, name
    assert (tmp_path / "kestrel-return.pdf").read_bytes().startswith(b"%PDF")

    database = home / "lab" / "tracker.sqlite"
    rows = counts(database)
    assert rows["specimen"] == 2  # the two rows of docs/examples/kestrel-list.csv
    assert rows["powder"] == rows["solution"] == rows["aliquot"] == 1
    assert rows["batch_position"] == 2  # the sample and the procedural blank
    assert rows["measurement"] == 7  # every row of docs/examples/ca-run.csv, matched or not
    assert rows["result"] >= 1  # the reduced session's δ values for the one cut
    db = open_database(database)
    try:
        assert chain.verify(db).ok
    finally:
        db.close()
