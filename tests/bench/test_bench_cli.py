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
from typing import Any

import pytest
from typer.testing import CliRunner, Result

from benchmarks import page
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
        (
            ("run", "--backend", "postgresql", "--pg-cluster", "--only", "verify"),
            "--only",
            "verify",
        ),
        (("run", "--backend", "sqlite", "--only", "pg"), "--only", "pg"),
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


@pytest.mark.slow
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
        assert figure["compared"], figure  # and every figure says what was compared, or why not
    assert any(tmp_path.glob("bench-scale0.002-*.sqlite"))  # cached for the next run


@pytest.mark.slow
def test_the_page_holds_the_same_figures_as_the_json_and_the_commit(tmp_path: Path) -> None:
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
        "--page",
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
    assert "--scales 0.002,0.004 --backend sqlite --repeat 1 --only reconcile,lineage" in text
    assert f"on the code of {page.commit()}." in text
    kept = page.figures_of(text)
    assert kept is not None and set(kept["figures"]) == {
        f"{f['key']}@{f['scale']:g}" for f in report["figures"]
    }
    assert "Figures slower than" not in text  # nothing to compare the first page with


@pytest.mark.slow
def test_a_second_run_replaces_its_page_and_names_what_got_slower(tmp_path: Path) -> None:
    out = tmp_path / "perf.md"
    args = ("run", "--scale", "0.002", "--backend", "sqlite", "--repeat", "1", "--only")
    first = bench(*args, "reconcile", "--cache", str(tmp_path), "--page", str(out))
    assert first.exit_code in (0, 1), first.stderr
    kept = page.figures_of(out.read_text(encoding="utf-8"))
    assert kept is not None
    kept["figures"]["reconcile@0.002"]["measured"] = 1e-9  # as if it had been far faster
    out.write_text(f"{page.DATA_BEGIN}{json.dumps(kept)}{page.DATA_END}\n", encoding="utf-8")
    second = bench(*args, "reconcile", "--cache", str(tmp_path), "--page", str(out))
    assert second.exit_code in (0, 1), second.stderr  # replaced without --force: its own page
    text = out.read_text(encoding="utf-8")
    assert f"Figures slower than on the page before (the run of {kept['commit']})" in text
    assert "| 0.000 s (ratio" in text  # the old value beside the new one
    assert [p.name for p in tmp_path.glob("perf.md*")] == ["perf.md"]  # no copy left behind


def test_slower_figures_carry_their_reason_and_faster_ones_are_not_listed() -> None:
    def figure(key: str, measured: float, higher: bool = False) -> dict[str, Any]:
        return {
            "key": key,
            "scale": 1.0,
            "title": key,
            "unit": "s",
            "measured": measured,
            "ratio": 2.0,
            "higher_is_better": higher,
        }

    before = {
        "commit": "commit abc1234",
        "figures": page._kept(
            [figure("verify", 1.0), figure("lookup", 1.0), figure("pg_drills", 100.0, True)]
        ),
    }
    now = [figure("verify", 1.2), figure("lookup", 0.5), figure("pg_drills", 50.0, True)]
    text = page._slower(before, now, {"verify": "signatures are checked"})
    assert (
        "| verify | 1 | 1.000 s (ratio 2.00) | 1.200 s (ratio 2.00) | signatures are checked |"
        in text
    )
    assert "| pg_drills | 1 |" in text and "no reason recorded yet" in text  # fewer per second
    assert "| lookup |" not in text  # faster is not slower
    assert page._slower(before, [figure("verify", 1.05)], {}).endswith(": none.")  # within 10 %


@pytest.mark.parametrize(
    ("only", "skipped"), [(("cold",), ["pg_cold"]), ((), ["pg", "pg_cold"]), (("pg",), ["pg"])]
)
def test_postgresql_figures_without_a_server_are_each_reported_skipped(
    only: tuple[str, ...], skipped: list[str]
) -> None:
    from benchmarks import run

    report = run.Report(machine={}, scales=[0.002])
    options = run.Options(scales=[0.002], backend="both", only=only)
    for scale in run._pg_scales(options):
        run._postgresql(options, scale, report)
    assert report.figures == []
    assert [s.key for s in report.skipped] == skipped
    assert all("--pg-url" in s.reason for s in report.skipped)  # the reason names the way out


def measured(key: str) -> bool:
    """Does the benchmark measure a figure of this key? A group's own key (reconcile, cold),
    a memory or PostgreSQL twin of one, or a whole command of the cold group."""
    from benchmarks import figures_cold
    from benchmarks.run import PG_FIGURES, SQLITE_FIGURES

    cold = Path(figures_cold.__file__).read_text(encoding="utf-8")
    plain = key.removeprefix("pg_").removesuffix("_memory")
    return plain in {*SQLITE_FIGURES, *PG_FIGURES, "drills"} or f'"{plain}"' in cold


def test_every_recorded_reason_names_a_figure_the_benchmark_measures() -> None:
    assert [key for key in page.reasons() if not measured(key)] == []
    assert not measured("cold_nothing") and not measured("pg_nothing")


def test_a_page_into_a_missing_folder_is_refused_before_running(tmp_path: Path) -> None:
    result = bench(
        "run",
        "--scale",
        "0.002",
        "--cache",
        str(tmp_path),
        "--page",
        str(tmp_path / "nowhere" / "perf.md"),
    )
    assert result.exit_code == 2 and "--page" in result.stderr
    assert not list(tmp_path.iterdir())


def test_a_page_aimed_at_a_database_is_refused_even_forced(tmp_path: Path) -> None:
    lab = tmp_path / "lab.sqlite"
    with closing(sqlite3.connect(lab)) as connection:
        connection.execute("CREATE TABLE custody_event(seq)")
        connection.commit()
    before = lab.read_bytes()
    cache = tmp_path / "cache"
    cache.mkdir()
    result = bench("run", "--scale", "0.002", "--cache", str(cache), "--page", str(lab), "--force")
    assert result.exit_code == 2 and "--page" in result.stderr, result.stderr
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


def test_a_page_over_a_file_the_benchmark_did_not_write_needs_force(tmp_path: Path) -> None:
    notes = tmp_path / "notes.md"
    notes.write_text("my own notes\n", encoding="utf-8")
    cache = tmp_path / "cache"
    cache.mkdir()
    result = bench("run", "--scale", "0.002", "--cache", str(cache), "--page", str(notes))
    assert result.exit_code == 2 and "--page" in result.stderr, result.stderr
    assert notes.read_text(encoding="utf-8") == "my own notes\n"
    assert not list(cache.iterdir())  # refused before anything was built


def test_missed_targets_are_listed_with_their_design_reason() -> None:
    def figure(key: str, met: bool | None) -> dict[str, Any]:
        return {
            "key": key,
            "scale": 1.0,
            "title": f"title of {key}",
            "unit": "s",
            "measured": 0.5,
            "target": "≤ 0.4 s",
            "met": met,
        }

    why = {"cold_lookup": "imports before the first row"}
    figures = [
        figure("cold_lookup", False),
        figure("pg_cold_lookup", False),
        figure("cold_show", True),
        figure("labels", None),
        figure("tui", False),
    ]
    text = page._missed(figures, why)
    assert "| title of cold_lookup | 1 | 0.500 s | ≤ 0.4 s | imports before the first row |" in text
    assert "| title of pg_cold_lookup | 1 | 0.500 s | ≤ 0.4 s | imports before the first row |" in (
        text
    )  # a PostgreSQL figure shares its SQLite twin's reason
    assert "| title of tui |" in text and "no reason recorded yet" in text
    assert "cold_show" not in text and "labels" not in text  # met, or no target
    assert page._missed([figure("cold_show", True)], why) == "Targets missed: none."


def test_every_reason_for_a_missed_target_names_a_figure_the_benchmark_measures() -> None:
    assert [key for key in page.reasons("missed.toml") if not measured(key)] == []


def test_warm_and_cold_figures_of_one_job_stand_side_by_side() -> None:
    def figure(key: str, scale: float, measured: float, unit: str) -> dict[str, Any]:
        return {"key": key, "scale": scale, "measured": measured, "unit": unit}

    figures = [
        figure("lookup", 1.0, 1.25, "ms"),
        figure("cold_lookup", 1.0, 0.52, "s"),
        figure("lookup", 4.0, 1.5, "ms"),  # no cold figure at this scale: no row
        figure("lineage", 1.0, 5.5, "ms"),
    ]
    text = page._side_by_side(figures)
    assert "| scanned-ID lookup | 1 | 1.250 ms | 0.520 s |" in text
    assert "| 4 |" not in text and "lineage" not in text
    assert page._side_by_side([figure("lookup", 1.0, 1.0, "ms")]) == ""


def test_a_figure_is_run_repeat_times_unless_its_first_run_is_long() -> None:
    from benchmarks.measure import LONG_RUN_S, alternated

    calls: list[str] = []

    def ours(seconds: float) -> float:
        calls.append("ours")
        return seconds

    def floor() -> float:
        calls.append("floor")
        return 0.0

    runs, floors = alternated(3, lambda: ours(1.0), floor, lambda run: run)
    assert (len(runs), len(floors)) == (3, 3)
    assert calls == ["ours", "floor"] * 3  # alternating
    runs, floors = alternated(3, lambda: ours(LONG_RUN_S + 1), floor, lambda run: run)
    assert (len(runs), len(floors)) == (1, 1)


@pytest.mark.slow
def test_a_page_written_again_from_its_run_s_report_gains_the_reasons_given_since(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    out, saved, before = (tmp_path / n for n in ("perf.md", "report.json", "before.md"))
    args = ("run", "--scale", "0.002", "--backend", "sqlite", "--repeat", "1", "--only")
    run = bench(*args, "reconcile", "--cache", str(tmp_path), "--page", str(out), as_json=True)
    assert run.exit_code in (0, 1), run.stderr
    saved.write_text(run.stdout, encoding="utf-8")
    first = out.read_text(encoding="utf-8")
    kept = page.figures_of(first)
    assert kept is not None
    kept["figures"]["reconcile@0.002"]["measured"] = 1e-9  # the run before was far faster
    before.write_text(f"{page.DATA_BEGIN}{json.dumps(kept)}{page.DATA_END}\n", encoding="utf-8")
    told = {"reconcile": "a reason a person wrote after the run"}
    recorded = page.reasons
    monkeypatch.setattr(
        page,
        "reasons",
        lambda name="reasons.toml": told if name == "reasons.toml" else recorded(name),
    )
    again = bench("page", str(out), "--report", str(saved), "--previous", str(before))
    assert again.exit_code == 0, again.stderr
    text = out.read_text(encoding="utf-8")
    assert "| a reason a person wrote after the run |" in text
    measured_line = next(line for line in first.splitlines() if line.startswith("Measured by"))
    assert measured_line in text  # the run's command and commit, not today's checkout
    tables = first.split(page.DATA_BEGIN, 1)[0].rstrip()  # nothing slower on the first page
    assert text.startswith(tables)  # the run's figures, unchanged
    # the page now keeps the run it replaced: written again, it needs no --previous
    assert bench("page", str(out), "--report", str(saved)).exit_code == 0
    assert "| a reason a person wrote after the run |" in out.read_text(encoding="utf-8")
    other = json.loads(run.stdout)
    other["figures"][0]["measured"] *= 2  # a report of another run
    saved.write_text(json.dumps(other), encoding="utf-8")
    refused = bench("page", str(out), "--report", str(saved))
    assert refused.exit_code == 2 and "another run" in refused.stderr, refused.stderr
