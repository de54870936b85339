"""`tracker bench`: bad options are one line naming the option and write nothing; a small run
prints every chosen figure next to its floor, and the floors agree with tracker's answers.

Nothing here asserts a speed (the benchmark itself does, on the real scale): the run is tiny.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tests.cli.conftest import invoke


@pytest.mark.parametrize(
    ("args", "field_name", "value"),
    [
        (("bench", "run", "--scale", "lots"), "--scale", "lots"),
        (("bench", "run", "--scale", "0"), "--scale", "0"),
        (("bench", "run", "--scales", "0.25,x"), "--scales", "x"),
        (("bench", "run", "--backend", "oracle"), "--backend", "oracle"),
        (("bench", "run", "--only", "reconcile,speed"), "--only", "speed"),
        (("bench", "generate", "--executor", "magic"), "--executor", "magic"),
    ],
)
def test_bad_options_are_one_line_naming_the_option(
    args: tuple[str, ...], field_name: str, value: str, tmp_path: Path
) -> None:
    result = invoke(*args, "--cache", str(tmp_path))
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and field_name in lines[0] and repr(value) in lines[0], lines
    assert not list(tmp_path.iterdir())  # nothing built


def test_generate_refuses_an_existing_file(tmp_path: Path) -> None:
    there = tmp_path / "there.sqlite"
    there.write_bytes(b"keep me")
    result = invoke("bench", "generate", "--scale", "0.002", "--out", str(there))
    assert result.exit_code == 2 and "--out" in result.stderr
    assert there.read_bytes() == b"keep me"


def test_a_small_run_prints_each_figure_with_its_floor_and_no_disagreement(tmp_path: Path) -> None:
    result = invoke(
        "bench",
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
    result = invoke(
        "bench",
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
    result = invoke(
        "bench",
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
