"""Fixtures the reliability tests share (the table of what they measure: report.py)."""

from __future__ import annotations

from collections.abc import Iterator

import pytest

from tests.cli.conftest import demo, demo_db, lab, lab_template  # noqa: F401  (shared fixtures)
from tests.reliability.bench import bench, bench_profile, bench_template  # noqa: F401
from tests.reliability.harness import Zygote


@pytest.fixture(scope="module")
def zygote() -> Iterator[Zygote]:
    """A warm interpreter that forks the workers (workers.py) on request, one per module."""
    started = Zygote()
    yield started
    started.close()
