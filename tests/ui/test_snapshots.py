"""Snapshots of the main screens (pytest-textual-snapshot); SVGs committed under
``__snapshots__``. Update deliberately with ``pytest -m slow tests/ui/test_snapshots.py
--snapshot-update``. Marked slow (a terminal drawn whole for each of dozens of scenes): the
default run leaves them to ``pytest -m slow``, which CI runs every time.

At the bench's 80×24 each scene is also held to the screen's width: every table shown fits
it, so no flag or figure sits off to the right, behind a sideways scroll a person would not
think to try. That is checked on the very run the picture is taken of."""

from __future__ import annotations

from typing import Any

import pytest
from textual.pilot import Pilot
from textual.widgets import DataTable

from tests.ui.conftest import Lab
from tests.ui.scenes import SCENES, Scene

BENCH_SIZE = (80, 24)
pytestmark = pytest.mark.slow


@pytest.mark.parametrize("scene", SCENES, ids=[s.name for s in SCENES])
def test_screen(scene: Scene, lab: Lab, snap_compare: Any) -> None:
    off_screen: list[tuple[str | None, int]] = []

    async def run(pilot: Pilot[None]) -> None:
        await scene.run(pilot)
        if scene.size == BENCH_SIZE:
            off_screen.extend(too_wide(pilot))

    assert snap_compare(lab.app(), terminal_size=scene.size, run_before=run)
    assert off_screen == []


def too_wide(pilot: Pilot[None]) -> list[tuple[str | None, int]]:
    """Each table shown (on the tab in front) wider than its room, with its width."""
    return [
        (table.id, table.virtual_size.width)
        for table in pilot.app.screen.query(DataTable)
        if table.row_count
        and table.region.width
        and table.virtual_size.width > table.scrollable_content_region.width
    ]
