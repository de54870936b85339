"""The loans overview: the services' lines (the CLI overview's), never lines the services have
not given; open loans first, all loans on ``a``. Each checked against what the database holds."""

from __future__ import annotations

import pytest
from rich.text import Text
from textual.app import App
from textual.coordinate import Coordinate
from textual.widgets import DataTable, Static

from tests.cli.conftest import invoke, ok_json
from tests.ui.conftest import Lab, settle, until
from tracker.services.read import browse, reconcile
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


async def test_before_the_database_opens_the_overview_shows_no_lines_but_says_so(
    lab: Lab, monkeypatch: pytest.MonkeyPatch
) -> None:
    opening = TrackerApp.open_database  # the worker that opens the database
    held: list[TrackerApp] = []
    monkeypatch.setattr(TrackerApp, "open_database", lambda self: held.append(self))
    expected = _expected(lab, open_only=True)
    app = lab.app()
    async with app.run_test(size=(100, 30)) as pilot:
        await until(pilot, lambda: isinstance(app.screen, OverviewScreen))
        await settle(pilot)
        assert app.db is None and held == [app]  # asked to open, not opened yet
        assert _rows(app) == []  # nothing is drawn that the services have not said
        assert "reading the open loans" in _hint(app)
        opening(app)  # now let the database open: the services read the overview
        await until(pilot, lambda: app.db is not None and _overview_filled(app))
        await settle(pilot)
        assert _rows(app) == expected and len(expected) == 2  # the demo's open loans
        assert "reading" not in _hint(app)


@pytest.mark.parametrize("size", [(120, 36), (80, 24)])
async def test_the_first_screen_shows_the_command_lines_overview(
    lab: Lab, size: tuple[int, int]
) -> None:
    """The interface and ``tracker --json overview`` ask the same service: the same loans in
    the same order, with the same numbers (both on today's clock), every flag in full words
    and the table no wider than the screen, at the bench's 80×24 too."""
    printed = ok_json(invoke("overview", db=lab.db_path, as_json=True))
    open_lines = [line for line in printed if line["status"] == "open"]
    db = lab.open()
    try:
        missing = browse.results_missing_counts(db)
    finally:
        db.close()
    app = TrackerApp(str(lab.db_path), "ines", out_dir=lab.out)  # today's clock, as the CLI's
    async with app.run_test(size=size) as pilot:
        await until(pilot, lambda: app.db is not None and _overview_filled(app))
        await settle(pilot)
        assert _rows(app) == [line["id"] for line in open_lines] and len(open_lines) == 2
        table = app.screen.query_one("#loans", DataTable)
        assert table.virtual_size.width <= table.scrollable_content_region.width  # nothing off
        for n, line in enumerate(open_lines):
            loan, used, due, specimens, flags = (_plain(cell) for cell in table.get_row_at(n))
            assert loan.split("\n") == [line["reference"], line["lender_code"]]
            assert used.startswith(f"{line['drilled_mg']:.3f}/")
            assert due.split("\n") == [line["due_on"], f"{line['days_left']} d left"]
            assert specimens.split("\n") == [
                f"{line['sampled']}/{line['specimens']} sampled",
                f"{line['on_hand']} on hand",
            ]
            count = missing.get(line["id"])
            said = line["flags"] + ([f"results missing: {count}"] if count else [])
            assert sorted(_flags_shown(flags)) == sorted(said)
        assert _hint(app).startswith("2 open loans")


def _flags_shown(cell: str) -> list[str]:
    """The flags a cell shows, each a mark and its words; a line starting with two spaces
    carries on the flag above it."""
    flags: list[str] = []
    for line in cell.split("\n"):
        if line.startswith("  "):
            flags[-1] += " " + line.strip()
        else:
            flags.append(line.split(" ", 1)[1])
    return flags


def _plain(cell: object) -> str:
    return cell.plain if isinstance(cell, Text) else str(cell)


def _hint(app: App[None]) -> str:
    return str(app.screen.query_one("#loan-hint", Static).render())


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
