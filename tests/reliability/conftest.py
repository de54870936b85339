"""Fixtures the reliability tests share, and the table of what they measured (report.py)."""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

import pytest

from tests.cli.conftest import demo, demo_db, lab, lab_template  # noqa: F401  (shared fixtures)
from tests.reliability import report
from tests.reliability.bench import bench, bench_profile, bench_template  # noqa: F401
from tests.reliability.harness import Zygote


@pytest.fixture(scope="module")
def zygote() -> Iterator[Zygote]:
    """A warm interpreter that forks the workers (workers.py) on request, one per module."""
    started = Zygote()
    yield started
    started.close()


def pytest_terminal_summary(terminalreporter: Any) -> None:
    if report.ROWS:
        terminalreporter.section("reliability: sizes and findings of this run")
        terminalreporter.write_line(report.table())
