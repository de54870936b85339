"""Unmatched instrument rows settled from the session screen: one row by hand (m, a small
form with the session and run filled in, the cut typed as a person types), or every row
named by a catalogue number (n); then r reduces again. Judged by what the database holds."""

from __future__ import annotations

from sqlalchemy import select
from textual.pilot import Pilot
from textual.widgets import DataTable, Input, Static

from tests.ui.conftest import (
    Lab,
    events_after,
    head,
    query,
    screen_as,
    settle,
    text_of,
    type_into,
    until,
)
from tracker.domain.ids import parse_id
from tracker.domain.models import Measurement, MeasurementRole, Result
from tracker.ui.app import PALETTE, bench_form
from tracker.ui.screens.form import FormScreen
from tracker.ui.screens.session import SessionScreen
from tracker.ui.screens.session_match import MatchRowScreen

RERUN = "IS-00003-6"  # the demo's calcium rerun (demo_db/scenario.toml: "ca-rerun")
SESSION_ROW = parse_id(RERUN).number
NICKNAMED = 6  # its run "tooth 14 rerun"
TOOTH_CUT = "CU-00004-F"  # the demo's Ca cut of KFMNH P 20313
SR_CUT = "CU-00012-F"  # the demo's first strontium cut


def runs(lab: Lab) -> dict[int, Measurement]:
    found = query(lab, select(Measurement).where(Measurement.session_id == SESSION_ROW))
    return {m.run_order: m for m in found}


def result_cuts(lab: Lab) -> set[int | None]:
    found = query(lab, select(Result).where(Result.session_id == SESSION_ROW))
    return {r.cut_id for r in found}


async def open_rerun(pilot: Pilot[None]) -> None:
    """F4, the rerun chosen in the list of sessions, Enter: as a person opens it."""
    await settle(pilot)
    await pilot.press("f4")
    await settle(pilot)
    sessions = screen_as(pilot, SessionScreen).query_one("#sessions", DataTable)
    sessions.move_cursor(row=sessions.get_row_index(RERUN))
    await pilot.press("enter")
    await settle(pilot)


def test_the_palette_opens_the_form_and_matches_by_name() -> None:
    actions = {action for _, _, action in PALETTE}
    assert {"bench('match_row')", "match_names"} <= actions
    assert isinstance(bench_form("match_row"), FormScreen)


async def test_a_row_matched_by_hand_then_reduced_again(lab: Lab) -> None:
    start = head(lab)
    async with lab.app("priya").run_test(size=(100, 30)) as pilot:
        await open_rerun(pilot)
        screen = screen_as(pilot, SessionScreen)
        await pilot.press("2")  # the Unmatched rows tab
        await settle(pilot)
        table = screen.query_one("#unmatched", DataTable)
        table.focus()
        table.move_cursor(row=table.get_row_index(str(NICKNAMED)))
        await settle(pilot)
        await pilot.press("m")
        await settle(pilot)
        form = screen_as(pilot, MatchRowScreen)
        assert form.id_input("session").value == RERUN
        assert form.query_one("#f-run-order", Input).value == str(NICKNAMED)
        await type_into(pilot, "target", "kfmnh p 20313")  # the tooth's catalogue number
        await pilot.press("ctrl+s")
        await until(pilot, lambda: pilot.app.screen is screen)
        await settle(pilot)
        head_text = text_of(screen.query_one("#session-head", Static))
        assert "reduce again" in head_text
        assert screen.query_one("#unmatched", DataTable).row_count == 2
        await pilot.press("r")
        await settle(pilot)
        assert "✓ reduced" in text_of(screen.query_one("#outcome", Static))
    matched = runs(lab)[NICKNAMED]
    assert matched.role is MeasurementRole.SAMPLE
    assert matched.cut_id == parse_id(TOOTH_CUT).number
    assert [e.action for e in events_after(lab, start)] == [
        "session.row_matched",
        "session.reduced",
    ]
    assert parse_id(TOOTH_CUT).number in result_cuts(lab)


async def test_a_cut_of_another_element_is_refused_and_nothing_written(lab: Lab) -> None:
    start = head(lab)
    async with lab.app("priya").run_test(size=(100, 30)) as pilot:
        await open_rerun(pilot)
        await pilot.press("m")
        await settle(pilot)
        form = screen_as(pilot, MatchRowScreen)
        await type_into(pilot, "target", SR_CUT)
        await pilot.press("ctrl+s")
        await settle(pilot)
        said = text_of(form.query_one("#outcome", Static))
        assert "Sr batch" in said
    assert head(lab) == start
    assert all(m.role is not MeasurementRole.SAMPLE for m in runs(lab).values())


async def test_rows_named_by_catalogue_number_matched_with_n(lab: Lab) -> None:
    start = head(lab)
    async with lab.app("priya").run_test(size=(100, 30)) as pilot:
        await open_rerun(pilot)
        screen = screen_as(pilot, SessionScreen)
        await pilot.press("n")
        await settle(pilot)
        said = text_of(screen.query_one("#outcome", Static))
        assert "2 row(s) matched" in said and "tooth 14 rerun" in said
        assert screen.query_one("#unmatched", DataTable).row_count == 1
        await pilot.press("r")
        await settle(pilot)
    now = runs(lab)
    assert now[2].role is MeasurementRole.SAMPLE and now[4].role is MeasurementRole.SAMPLE
    assert now[NICKNAMED].role is MeasurementRole.UNMATCHED  # listed, never dropped
    assert [e.action for e in events_after(lab, start)] == [
        "session.rows_matched",
        "session.reduced",
    ]
    assert {now[2].cut_id, now[4].cut_id} <= result_cuts(lab)
