"""Print what the reliability tests measured (see tests/reliability/report.py)."""

from __future__ import annotations

from typing import Any

from tests.cli.conftest import demo, demo_db, lab, lab_template  # noqa: F401  (shared fixtures)
from tests.reliability import report
from tests.reliability.bench import bench, bench_profile, bench_template  # noqa: F401


def pytest_terminal_summary(terminalreporter: Any) -> None:
    if report.ROWS:
        terminalreporter.section("reliability: sizes and findings of this run")
        terminalreporter.write_line(report.table())
