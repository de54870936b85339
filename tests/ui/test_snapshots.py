"""Snapshots of the main screens (pytest-textual-snapshot); SVGs committed under
``__snapshots__``. Update deliberately with ``pytest tests/ui --snapshot-update``."""

from __future__ import annotations

from typing import Any

import pytest
from textual.widgets import DataTable

from tests.ui.conftest import Lab
from tests.ui.scenes import SCENES, Scene


@pytest.mark.parametrize("scene", SCENES, ids=[s.name for s in SCENES])
def test_screen(scene: Scene, lab: Lab, snap_compare: Any) -> None:
    assert snap_compare(lab.app(), terminal_size=scene.size, run_before=scene.run)


BENCH_SIZE = (80, 24)


@pytest.mark.parametrize(
    "scene", [s for s in SCENES if s.size == BENCH_SIZE], ids=lambda s: str(s.name)
)
async def test_no_table_runs_off_the_bench_screen(scene: Scene, lab: Lab) -> None:
    """At 80×24 every table's columns fit its width: no flag or figure sits off to the right,
    behind a sideways scroll a person would not think to try."""
    async with lab.app().run_test(size=BENCH_SIZE) as pilot:
        await scene.run(pilot)
        for table in pilot.app.screen.query(DataTable):
            if table.row_count and table.region.width:  # shown, on the tab in front
                assert table.virtual_size.width <= table.scrollable_content_region.width, (
                    table.id,
                    table.virtual_size.width,
                )
