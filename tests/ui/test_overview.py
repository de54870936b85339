"""The loans overview: drawn from the glance before the database opens, then by the services;
open loans first, all loans on ``a``. Each checked against what the database holds."""

from __future__ import annotations

import pytest
from textual.app import App
from textual.coordinate import Coordinate
from textual.widgets import DataTable

from tests.ui.conftest import Lab, settle, until
from tracker.services import reconcile
from tracker.ui.app import TrackerApp
from tracker.ui.screens.overview import OverviewScreen


def _expected(lab: Lab, *, open_only: bool) -> list[str]:
    db = lab.open()
    try:
        return [line.id for line in reconcile.reconcile(db, specimens=False, open_only=open_only)]
    finally:
        db.close()


def _rows(app: App[None]) -> list[str]:
    table = app.screen.query_one("#loans", DataTable)
    return [
        str(table.coordinate_to_cell_key(Coordinate(n, 0)).row_key.value)
        for n in range(table.row_count)
    ]


def _overview_filled(app: App[None]) -> bool:
    return isinstance(app.screen, OverviewScreen) and bool(
        app.screen.query_one("#loans", DataTable).row_count
    )


async def test_the_overview_is_drawn_before_the_database_opens(
    lab: Lab, monkeypatch: pytest.MonkeyPatch
) -> None:
    opening = TrackerApp.open_database  # the worker that loads SQLAlchemy and the services
    held: list[TrackerApp] = []
    monkeypatch.setattr(TrackerApp, "open_database", lambda self: held.append(self))
    expected = _expected(lab, open_only=True)
    app = lab.app()
    async with app.run_test(size=(100, 30)) as pilot:
        await until(pilot, lambda: _overview_filled(app))
        assert app.db is None and held == [app]  # asked to open, not opened yet
        assert _rows(app) == expected and len(expected) == 2  # the demo's open loans
        opening(app)  # now let the database open: the services read the overview again
        await until(pilot, lambda: app.db is not None and app.operator == "ines")
        await settle(pilot)
        assert _rows(app) == expected


async def test_open_loans_first_and_all_loans_on_a(lab: Lab) -> None:
    open_loans, all_loans = (_expected(lab, open_only=flag) for flag in (True, False))
    assert len(open_loans) < len(all_loans)  # the demo has a returned loan
    app = lab.app()
    async with app.run_test(size=(100, 30)) as pilot:
        await until(pilot, lambda: app.db is not None and _overview_filled(app))
        await settle(pilot)
        assert _rows(app) == open_loans
        await pilot.press("a")
        await until(pilot, lambda: len(_rows(app)) == len(all_loans))
        assert _rows(app) == all_loans  # the returned loan after the open ones
        await pilot.press("a")
        await until(pilot, lambda: len(_rows(app)) == len(open_loans))
        assert _rows(app) == open_loans
