"""The benchmark's whole-process timing: the command's own memory, and no run can hang."""

from __future__ import annotations

import json
import os
import sys
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import create_engine, text

from benchmarks.measure import Figure
from benchmarks.process import run_process
from tracker.domain.ids import Kind, format_id


def test_peak_memory_is_the_command_s_own_not_the_benchmark_s() -> None:
    held = bytearray(300 * 1024 * 1024)  # the benchmark holding a large database's worth
    held[::4096] = b"\x01" * len(held[::4096])
    run = run_process([sys.executable, "-c", "print('hello')"], dict(os.environ))
    assert run.code == 0 and run.stdout == "hello\n"
    assert 0 < run.peak_mb < 100, run.peak_mb  # a bare interpreter, not the 300 MB above
    assert 0 < run.cpu <= run.wall + 0.05
    del held


def test_a_command_past_its_timeout_is_killed_and_gives_no_answer() -> None:
    run = run_process([sys.executable, "-c", "import time; time.sleep(30)"], dict(os.environ), 1.0)
    assert not run.answered and run.code is None
    assert 1.0 <= run.wall < 10


def test_a_failed_untimed_step_before_the_runs_is_a_problem_naming_tracker_s_refusal(
    tmp_path: Path,
) -> None:
    from benchmarks import children, figures_cold

    missing = tmp_path / "missing.sqlite"
    env = children.environment(TRACKER_CHECKPOINT_DIR=str(tmp_path / "checkpoints"))
    problem = figures_cold._settled(str(missing), env, figures_cold.AUDITED)
    assert problem.startswith("the untimed ledger verify before the runs failed: ")
    assert "--db" in problem and missing.name in problem  # tracker's own line, its last
    assert not missing.exists()


@pytest.mark.slow
def test_every_cold_command_runs_beside_its_floor_and_agrees(tmp_path: Path) -> None:
    """A tiny lab: every whole-process figure is measured, answered and held against its
    floor (nothing here is about speed)."""
    from tests.bench.test_bench_cli import bench

    result = bench(
        "run",
        "--scale",
        "0.002",
        "--backend",
        "sqlite",
        "--repeat",
        "1",
        "--only",
        "cold",
        "--cache",
        str(tmp_path),
        as_json=True,
    )
    assert result.exit_code in (0, 1), result.stderr
    figures = {f["key"]: f for f in json.loads(result.stdout)["figures"]}
    assert set(figures) >= {
        "cold_version",
        "cold_help",
        "cold_lookup",
        "cold_show",
        "cold_overview",
        "cold_reconcile_loan",
        "cold_reconcile",
        "cold_report",
        "cold_reduce",
    }
    for figure in figures.values():
        assert figure["problems"] == [], figure
        assert "CPU" in figure["notes"][0] and "peak memory" in figure["notes"][0]
        assert figure["compared"]


NEVER_PRINTED = 999_999_999  # a specimen number no lab of a test's size holds


@pytest.mark.slow
@pytest.mark.postgresql
def test_every_cold_command_runs_on_postgresql_beside_its_psycopg_floor(
    pg_server: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """The same table on a tiny lab on the test server: every command that opens a database
    is answered and held against its floor, the commands that write leave the built database
    alone, and a floor that finds an ID tracker did not print is a problem of its figure."""
    from benchmarks import figures_cold
    from benchmarks.figures_pg import drop_database, fresh_database
    from tests.bench.test_bench_cli import bench

    measure = figures_cold._measure

    def one_floor_disagrees(cold: figures_cold.Cold, env: dict[str, str], repeat: int) -> Figure:
        if cold.key == "cold_reconcile_loan":
            check = cold.check
            cold.check = lambda run, answer: check(
                run, answer | {"specimens": [*answer["specimens"], NEVER_PRINTED]}
            )
        return measure(cold, env, repeat)

    monkeypatch.setattr(figures_cold, "_measure", one_floor_disagrees)
    url = fresh_database(pg_server, f"tracker_cold_{os.getpid()}")
    try:
        result = bench(
            "run",
            "--scale",
            "0.002",
            "--backend",
            "postgresql",
            "--pg-url",
            url,
            "--repeat",
            "1",
            "--only",
            "cold",
            "--page",
            str(tmp_path / "perf.md"),
            as_json=True,
        )
        (events,) = _rows(url, "SELECT COUNT(*) FROM custody_event")[0]
        databases = {row[0] for row in _rows(url, "SELECT datname FROM pg_database")}
    finally:
        drop_database(url)
    assert result.exit_code in (0, 1), result.stderr
    report = json.loads(result.stdout)
    assert report["skipped"] == []
    figures = {f["key"]: f for f in report["figures"]}
    assert set(figures) == {
        f"pg_cold_{name}"
        for name in ("lookup", "show", "overview", "reconcile_loan", "reconcile", "report")
    } | {"pg_cold_reduce"}
    disagreeing = figures.pop("pg_cold_reconcile_loan")
    (problem,) = disagreeing["problems"]  # only the ID tracker never printed is missing
    assert problem.startswith("tracker's output lacks 1 of ")
    assert problem.endswith(f": {[format_id(Kind.SPECIMEN, NEVER_PRINTED)]}")
    for figure in figures.values():
        assert figure["problems"] == [], figure
        assert figure["title"].startswith("PostgreSQL: ")
        assert figure["floor_title"] == "a fresh interpreter, psycopg"
        assert "CPU" in figure["notes"][0] and "peak memory" in figure["notes"][0]
        assert figure["measured"] > 0 and figure["floor"] > 0 and figure["compared"]
    assert events == report["builds"][0]["events"]  # the report and the reduction: on the copy
    assert f"tracker_cold_{os.getpid()}_writes" not in databases  # the copy dropped
    page_text = (tmp_path / "perf.md").read_text(encoding="utf-8")
    table = page_text.split("On PostgreSQL:", 1)[1]
    assert all(f"| {f['title']} (floor: " in table for f in report["figures"])


def _rows(url: str, sql: str) -> list[Any]:
    engine = create_engine(url)
    try:
        with engine.connect() as connection:
            return list(connection.execute(text(sql)))
    finally:
        engine.dispose()
