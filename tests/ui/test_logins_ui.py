"""The interface on a technician's own database login: picking a manager records nothing."""

from __future__ import annotations

from pathlib import Path

import pytest
from textual.widgets import Input, Static

from tests.logins import Lab
from tests.ui.conftest import clock, scan, settle, text_of, until
from tests.ui.test_flows import previewed, set_field
from tracker.ui.app import TrackerApp
from tracker.ui.screens.drill import DrillScreen

pytestmark = pytest.mark.postgresql


async def test_a_technicians_login_cannot_override_as_a_manager_in_the_interface(
    demo_lab: Lab, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("TRACKER_CONFIG_DIR", str(tmp_path / "config"))
    before = demo_lab.rows()
    app = TrackerApp(demo_lab.url("tomas"), "ines", clock=clock, out_dir=tmp_path)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("d")
        await settle(pilot)
        form = pilot.app.screen
        assert isinstance(form, DrillScreen)
        assert not form.query_one("#f-override-reason", Input).disabled  # ines is a manager
        await scan(pilot, "SP-00010-U")
        set_field(form, "tare", "1200.000 mg")
        set_field(form, "gross", "1201.500 mg")  # over the specimen's allowance
        set_field(form, "override-reason", "the lender agreed by telephone")
        await until(pilot, lambda: previewed(form, 1.5))
        await pilot.press("ctrl+s")
        await settle(pilot)
        await pilot.press("y")  # an override is confirmed first
        await settle(pilot)
        outcome = text_of(form.query_one("#outcome", Static))
        assert outcome.startswith("✗ refused: operator: 'ines':"), outcome
        assert "records as tomas only" in outcome
        assert pilot.app.screen is form
    assert demo_lab.rows() == before
