"""The reference material control chart in the interface: opened from the palette on a lab
whose reference material was measured in several sessions, a chart chosen with the keys a
person presses, and held to the service's own answer (each session's verdict and strip as
the service judges it; nothing copied from a run)."""

from __future__ import annotations

import shutil
from datetime import UTC, datetime
from pathlib import Path

from textual.widgets import Select, Static

from tests.conftest import TickingClock
from tests.services.test_instrument import bench
from tests.services.test_reproducibility import HIGH, ORDINARY, a_session
from tests.ui.conftest import screen_as, settle, until
from tests.ui.test_loan_views import on_screen
from tracker.db.database import open_database
from tracker.present.control import VERDICT, strip
from tracker.services.instrument import reproducibility
from tracker.services.instrument.reproducibility import ChartChoice, ControlChart
from tracker.ui.app import PALETTE, TrackerApp
from tracker.ui.screens.reference_chart import NOTHING_YET, ReferenceChartScreen


def clock() -> datetime:
    return datetime(2026, 12, 1, 12, 0, tzinfo=UTC)


def measured_lab(template: Path, target: Path, sessions: list[float]) -> list[str]:
    """A lab whose reference material RM-A was measured once in each of ``sessions``."""
    shutil.copyfile(template, target)
    db = open_database(target, clock=TickingClock())
    try:
        if not sessions:
            return []
        cut = bench(db).cut
        return [a_session(db, cut, m, f"S{i}") for i, m in enumerate(sessions)]
    finally:
        db.close()


def service(target: Path) -> tuple[list[ChartChoice], list[ControlChart]]:
    db = open_database(target, clock=TickingClock())
    try:
        offered = reproducibility.charts(db)
        charts = [reproducibility.control_chart(db, c.reference, c.ratio, c.scale) for c in offered]
        return offered, charts
    finally:
        db.close()


def rows_of(text: str, chart: ControlChart) -> dict[str, str]:
    """Each session's first line on screen (its ID, values, strip and verdict)."""
    lines = text.splitlines()
    return {p.session: next(line for line in lines if p.session in line) for p in chart.points}


def is_open(chooser: Select[int]) -> bool:
    return chooser.expanded


def test_the_palette_offers_the_chart() -> None:
    assert "reference_chart" in {action for _, _, action in PALETTE}


async def test_a_chart_chosen_with_keys_shows_the_services_verdicts(
    sqlite_template: Path, tmp_path: Path
) -> None:
    target = tmp_path / "lab.sqlite"
    made = measured_lab(sqlite_template, target, [*ORDINARY, HIGH])
    offered, charts = service(target)
    assert len(offered) >= 2  # the premise: more than one chart to choose among
    chosen = charts[1]  # the second offered, reached with one key down
    assert {p.within for p in chosen.points} == {True, False}  # both verdicts to see
    app = TrackerApp(str(target), "boss", clock=clock, out_dir=tmp_path)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.app.run_action("reference_chart")  # the palette's entry
        await settle(pilot)
        screen = screen_as(pilot, ReferenceChartScreen)
        body = screen.query_one("#chart-body", Static)
        await until(pilot, lambda: made[0] in on_screen(body))
        first = rows_of(on_screen(body), charts[0])
        assert all(VERDICT[p.within] in first[p.session] for p in charts[0].points)
        await pilot.press("v")  # the chooser opens over the chart
        await settle(pilot)
        chooser = screen.query_one("#chart-choice", Select)
        assert is_open(chooser)
        await pilot.press("down", "enter")  # the next chart
        await settle(pilot)
        assert chooser.value == 1 and not is_open(chooser)
        await until(pilot, lambda: offered[1].ratio in on_screen(body))
        text = on_screen(body)
        shown_rows = rows_of(text, chosen)
        assert list(shown_rows) == made
        for p in chosen.points:
            line = shown_rows[p.session]
            assert VERDICT[p.within] in line, (p.session, line)
            assert strip(p) in line, (p.session, line)  # drawn whole at 80 columns


async def test_nothing_measured_says_how_results_get_there(
    sqlite_template: Path, tmp_path: Path
) -> None:
    target = tmp_path / "lab.sqlite"
    measured_lab(sqlite_template, target, [])
    app = TrackerApp(str(target), "boss", clock=clock, out_dir=tmp_path)
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("f4")
        await settle(pilot)
        await pilot.press("l")  # from the sessions screen
        await settle(pilot)
        screen = screen_as(pilot, ReferenceChartScreen)
        body = screen.query_one("#chart-body", Static)
        await until(pilot, lambda: "No reference material" in on_screen(body))
        assert " ".join(on_screen(body).split()) == NOTHING_YET
        assert not screen.query_one("#chart-choice-row").display
