"""The benchmark's whole-process timing: the command's own memory, and no run can hang."""

from __future__ import annotations

import os
import sys

import pytest

from benchmarks.process import run_process


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


@pytest.mark.slow
def test_every_cold_command_runs_beside_its_floor_and_agrees(tmp_path: object) -> None:
    """A tiny lab: every whole-process figure is measured, answered and held against its
    floor (nothing here is about speed)."""
    import json

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
