"""Snapshots of the main screens (pytest-textual-snapshot); SVGs committed under
``__snapshots__``. Update deliberately with ``pytest tests/ui --snapshot-update``."""

from __future__ import annotations

from typing import Any

import pytest

from tests.ui.conftest import Lab
from tests.ui.scenes import SCENES, Scene


@pytest.mark.parametrize("scene", SCENES, ids=[s.name for s in SCENES])
def test_screen(scene: Scene, lab: Lab, snap_compare: Any) -> None:
    assert snap_compare(lab.app(), terminal_size=scene.size, run_before=scene.run)
