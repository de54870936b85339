"""`python -m benchmarks`: bad options are one line naming the option and write nothing; a
small run prints every chosen figure next to its floor, and the floors agree with tracker's
answers.

Nothing here asserts a speed (the benchmark itself does, on the real scale): the run is tiny.
"""

from __future__ import annotations

import importlib.util
import json
import os
import sqlite3
import subprocess
import sys
from contextlib import closing
from pathlib import Path

import pytest
from typer.testing import CliRunner, Result

from benchmarks.children import CHECKOUT
from benchmarks.cli import app
from tests.cli.conftest import CLEAN_ENV, invoke


def bench(*args: str, as_json: bool = False) -> Result:
    """Run ``python -m benchmarks [--json] ARGS...`` in this process."""
    argv = ["--json", *args] if as_json else list(args)
    return CliRunner().invoke(app, argv, env=CLEAN_ENV, catch_exceptions=False)


@pytest.mark.parametrize(
    ("args", "field_name", "value"),
    [
        (("run", "--scale", "lots"), "--scale", "lots"),
        (("run", "--scale", "0"), "--scale", "0"),
        (("run", "--scales", "0.25,x"), "--scales", "x"),
        (("run", "--backend", "oracle"), "--backend", "oracle"),
        (("run", "--only", "reconcile,speed"), "--only", "speed"),
        (("generate", "--executor", "magic"), "--executor", "magic"),
        (("run", "--backend", "postgresql"), "--backend", "postgresql"),  # no server named
        (("run", "--pg-url", "postgresql://x/y", "--pg-cluster"), "--pg-url", "postgresql://x/y"),
    ],
)
def test_bad_options_are_one_line_naming_the_option(
    args: tuple[str, ...], field_name: str, value: str, tmp_path: Path
) -> None:
    result = bench(*args, "--cache", str(tmp_path))
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and field_name in lines[0] and repr(value) in lines[0], lines
    assert not list(tmp_path.iterdir())  # nothing built


def test_generate_refuses_an_existing_file(tmp_path: Path) -> None:
    there = tmp_path / "there.sqlite"
    there.write_bytes(b"keep me")
    result = bench("generate", "--scale", "0.002", "--out", str(there))
    assert result.exit_code == 2 and "--out" in result.stderr
    assert there.read_bytes() == b"keep me"


def test_a_small_run_prints_each_figure_with_its_floor_and_no_disagreement(tmp_path: Path) -> None:
    result = bench(
        "run",
        "--scale",
        "0.002",
        "--backend",
        "sqlite",
        "--repeat",
        "1",
        "--only",
        "reconcile,verify,signing,audit,lookup,lineage",
        "--cache",
        str(tmp_path),
        as_json=True,
    )
    assert result.exit_code in (0, 1), result.stderr  # 1: a target missed (tiny scales say nothing)
    report = json.loads(result.stdout)
    figures = {f["key"]: f for f in report["figures"]}
    assert set(figures) >= {"reconcile", "verify", "verify_memory", "signing", "lookup", "lineage"}
    assert {"audit", "audit_memory"} <= set(figures)  # the state audit beside its floor
    for figure in figures.values():
        assert figure["measured"] > 0 and figure["floor"] > 0, figure
        assert figure["problems"] == [], figure  # each floor computed the same answer
    assert any(tmp_path.glob("bench-scale0.002-*.sqlite"))  # cached for the next run


def test_markdown_holds_the_same_figures_as_the_json(tmp_path: Path) -> None:
    out = tmp_path / "perf.md"
    result = bench(
        "run",
        "--scales",
        "0.002,0.004",
        "--backend",
        "sqlite",
        "--repeat",
        "1",
        "--only",
        "reconcile,lineage",
        "--cache",
        str(tmp_path),
        "--markdown",
        str(out),
        as_json=True,
    )
    assert result.exit_code in (0, 1), result.stderr
    report = json.loads(result.stdout)
    text = out.read_text(encoding="utf-8")
    for figure in report["figures"]:
        assert (
            f"| {figure['title']} (floor: {figure['floor_title']}) | {figure['scale']:g} |" in text
        )
        assert f"| {figure['ratio']:.2f} |" in text
    assert {g["key"] for g in report["growth"]} == {"reconcile", "lineage"}
    assert "| growth of | scale 0.002 | scale 0.004 | exponent | verdict |" in text
    assert "--scales 0.002,0.004 --backend sqlite --repeat 1 --only reconcile,lineage`" in text


def test_markdown_into_a_missing_folder_is_refused_before_running(tmp_path: Path) -> None:
    result = bench(
        "run",
        "--scale",
        "0.002",
        "--cache",
        str(tmp_path),
        "--markdown",
        str(tmp_path / "nowhere" / "perf.md"),
    )
    assert result.exit_code == 2 and "--markdown" in result.stderr
    assert not list(tmp_path.iterdir())


def test_markdown_aimed_at_a_database_is_refused_even_forced(tmp_path: Path) -> None:
    lab = tmp_path / "lab.sqlite"
    with closing(sqlite3.connect(lab)) as connection:
        connection.execute("CREATE TABLE custody_event(seq)")
        connection.commit()
    before = lab.read_bytes()
    cache = tmp_path / "cache"
    cache.mkdir()
    result = bench(
        "run", "--scale", "0.002", "--cache", str(cache), "--markdown", str(lab), "--force"
    )
    assert result.exit_code == 2 and "--markdown" in result.stderr, result.stderr
    assert lab.read_bytes() == before
    assert not list(cache.iterdir())  # refused before anything was built


def test_runs_from_a_checkout_as_a_module() -> None:
    """``python -m benchmarks`` from the checkout's folder: no installation, no PYTHONPATH."""
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    done = subprocess.run(
        [sys.executable, "-m", "benchmarks", "--help"],
        cwd=CHECKOUT,
        env=env,
        capture_output=True,
        text=True,
        check=False,
    )
    assert done.returncode == 0, done.stderr
    assert "generate" in done.stdout and "run" in done.stdout


def test_tracker_holds_no_benchmark() -> None:
    """The product ships without it: no ``tracker.bench`` package, no ``tracker bench``."""
    assert importlib.util.find_spec("tracker.bench") is None
    result = invoke("bench", "--help")
    assert result.exit_code == 2 and "bench" in result.stderr, result.stderr
