"""A loan's results on a chosen reference scale, its Sr age screening, and the form that
chooses its curve: reached with the keys a person presses, and held to the services' own
answers (the numbers on screen are read back and compared with what the service returns,
to the places shown; nothing is copied from a run)."""

from __future__ import annotations

import io
import re
from itertools import pairwise

from rich.console import Console
from sqlalchemy import select
from textual.pilot import Pilot
from textual.widgets import Select, Static, TabbedContent

from tests.conftest import snapshot_counts
from tests.ui.conftest import Lab, events_after, head, query, screen_as, settle, until
from tracker.demo import scenario_path
from tracker.domain.models import Loan, SrCurve
from tracker.services.instrument import results, screening
from tracker.services.instrument.results import SpecimenResult
from tracker.services.instrument.screening import Screening
from tracker.ui.app import PALETTE
from tracker.ui.screens.loan import LoanScreen
from tracker.ui.screens.loan_curve import ChooseCurveScreen

MDGC, KF = "MDGC/LN/0457", "KF-2026-014"  # demo loans: brachiopods (Sr, a curve), shark teeth
SEAWATER = "Seawater in-house"  # a demo reference with accepted δ44/40 and δ44/42
NUMBER = re.compile(r"[+-]?\d+\.\d+")


def on_screen(widget: Static) -> str:
    """What a Static shows, drawn at its own width as the terminal draws it."""
    console = Console(width=widget.content_region.width, file=io.StringIO(), record=True)
    console.print(widget.content)
    return console.export_text()


def close_to(shown: str, value: float) -> bool:
    """A number as shown equals the service's value to the places it is shown with."""
    places = len(shown.split(".")[1]) if "." in shown else 0
    return bool(abs(float(shown) - value) <= 0.5 * 10**-places + 1e-12)


def answer_of(lab: Lab, loan: str, scale: str | None = None) -> list[SpecimenResult]:
    db = lab.open()
    try:
        return results.results(db, loan, scale)
    finally:
        db.close()


def screening_of(lab: Lab, loan: str) -> list[Screening]:
    db = lab.open()
    try:
        return screening.screen(db, loan)
    finally:
        db.close()


def scales_of(lab: Lab, loan: str) -> list[str]:
    db = lab.open()
    try:
        return results.scales(db, loan)
    finally:
        db.close()


async def open_loan(pilot: Pilot[None], row: int) -> LoanScreen:
    """From the loans overview, the ``row``-th loan (0: the most urgent), as a person does."""
    await settle(pilot)
    await pilot.press(*(["down"] * row), "enter")
    await settle(pilot)
    return screen_as(pilot, LoanScreen)


def results_rows(text: str) -> dict[tuple[str, str], list[str]]:
    """The results list's rows by (specimen, ratio): the cells after those two."""
    rows = {}
    for line in text.splitlines():
        cells = re.split(r" {3,}", line.strip())
        if len(cells) >= 6 and cells[0].startswith("SP-"):
            rows[(cells[0], cells[1])] = cells[2:]
    return rows


def assert_shows(text: str, answer: list[SpecimenResult]) -> None:
    """Every result of the service's answer is on screen with its value, 2SD (each with its
    unit), n and scale, and nothing else is."""
    rows = results_rows(text)
    assert len(rows) == len(answer) > 0
    for r in answer:
        value, two_sd, n, scale = rows[(r.specimen, r.ratio)][:4]
        unit = " ‰" if r.kind == "delta" else ""
        assert value.endswith(unit) and two_sd.endswith(unit), (value, two_sd)
        assert close_to(value.removesuffix(unit), r.value)
        assert r.two_sd is not None and close_to(two_sd.removesuffix(unit), r.two_sd)
        assert "± 0.000" not in text and not re.fullmatch(r"0\.0+", two_sd.removesuffix(unit))
        assert (int(n), scale) == (r.n, r.scale)


async def test_results_per_specimen_and_another_scale_chosen_with_keys(lab: Lab) -> None:
    measured = answer_of(lab, MDGC)
    converted = answer_of(lab, MDGC, SEAWATER)
    # the premise: the change of scale moves the δ values
    assert [r.value for r in measured] != [r.value for r in converted]
    offered = scales_of(lab, MDGC)
    async with lab.app().run_test(size=(80, 24)) as pilot:
        loan = await open_loan(pilot, 0)  # the most urgent: the brachiopods
        await pilot.press("4")
        await settle(pilot)
        assert loan.query_one("#loan-tabs", TabbedContent).active == "tab-results"
        listing = loan.query_one("#results-list", Static)
        await until(pilot, lambda: "SP-" in on_screen(listing))
        assert_shows(on_screen(listing), measured)
        await pilot.press("v")  # the scale chooser opens over the list
        await settle(pilot)
        chooser = loan.query_one("#results-scale", Select)
        assert chooser.expanded and chooser.has_focus_within
        await pilot.press(*(["down"] * (1 + offered.index(SEAWATER))), "enter")
        await until(pilot, lambda: SEAWATER in on_screen(listing))
        assert chooser.value == SEAWATER
        assert_shows(on_screen(listing), converted)


async def test_every_delta_put_on_one_ratio_chosen_with_keys(lab: Lab) -> None:
    db = lab.open()
    try:
        offered = results.ratios(db, MDGC)
        converted = results.results(db, MDGC, None, "44/40", "equilibrium")
    finally:
        db.close()
    moved = [r for r in converted if r.converted_from is not None]
    assert "44/40" in offered and moved  # the premise: δ44/42 results to put on 44/40
    async with lab.app().run_test(size=(80, 24)) as pilot:
        loan = await open_loan(pilot, 0)
        await pilot.press("4")
        listing = loan.query_one("#results-list", Static)
        await until(pilot, lambda: "SP-" in on_screen(listing))
        assert "←" not in on_screen(listing)  # as measured: nothing converted
        await pilot.press("r")  # the ratio chooser opens over the list
        await settle(pilot)
        chooser = loan.query_one("#results-ratio", Select)
        assert chooser.expanded and chooser.has_focus_within
        # options: each δ on its own ratio, then each offered ratio by each law
        index = 1 + 2 * offered.index("44/40") + 1  # the equilibrium law of 44/40
        await pilot.press(*(["down"] * index), "enter")
        await until(pilot, lambda: "←" in on_screen(listing))
        assert chooser.value == "44/40 equilibrium"
        shown = on_screen(listing)
        assert "equilibrium law" in shown  # the note under the list names the law and k
        lines = converted_lines(shown)
        assert len(lines) == len(moved)
        for r in moved:  # each converted δ on screen, to the places shown, with its unit
            assert any(
                specimen == r.specimen and close_to(value.removesuffix(" ‰"), r.value)
                for specimen, value in lines
            ), r


def converted_lines(text: str) -> list[tuple[str, str]]:
    """(specimen, value) of each list row whose ratio cell says it was converted (the row's
    second line holds ``← 44/42``)."""
    found = []
    for line, below in pairwise(text.splitlines()):
        cells = re.split(r" {3,}", line.strip())
        if cells[0].startswith("SP-") and "← 44/42" in below:
            found.append((cells[0], cells[2]))
    return found


async def test_the_scales_offered_are_the_services(lab: Lab) -> None:
    offered = scales_of(lab, MDGC)
    assert SEAWATER in offered  # the premise: the demo has a scale to change to
    async with lab.app().run_test(size=(80, 24)) as pilot:
        loan = await open_loan(pilot, 0)
        await pilot.app.run_action("loan_view('scale')")  # the palette's entry
        await settle(pilot)
        chooser: Select[str] = loan.query_one("#results-scale", Select)
        values = [value for _, value in chooser._options]
        assert values[1:] == offered and values[0] == ""  # first: as measured


async def test_screening_sets_each_ratio_beside_the_curve_at_its_stated_age(lab: Lab) -> None:
    answer = screening_of(lab, MDGC)
    assert answer and all(s.expected_low is not None for s in answer)
    async with lab.app().run_test(size=(80, 24)) as pilot:
        loan = await open_loan(pilot, 0)
        await pilot.press("5")
        await settle(pilot)
        assert loan.query_one("#loan-tabs", TabbedContent).active == "tab-screening"
        lines = loan.query_one("#screening-lines", Static)
        await until(pilot, lambda: "SP-" in on_screen(lines))
        text = on_screen(lines)
        head_line = on_screen(loan.query_one("#screening-curve", Static))
        assert "devonian-INVENTED" in head_line  # scenario.toml's curve for this loan
        blocks = text.strip().split("\n\n")
        assert len(blocks) == len(answer)
        for block, s in zip(blocks, answer, strict=True):
            first, measured, expected, allowed = block.splitlines()
            assert first.startswith(s.specimen) and first.endswith(s.verdict)
            ratio, two_sd = NUMBER.findall(measured)[:2]
            assert close_to(ratio, s.ratio) and s.two_sd and close_to(two_sd, s.two_sd)
            low, high = NUMBER.findall(expected)[:2]
            assert s.expected_low is not None and s.expected_high is not None
            assert close_to(low, s.expected_low) and close_to(high, s.expected_high)
            ages = [float(x) for x in NUMBER.findall(allowed)]
            assert ages == [round(x, 2) for pair in s.intervals_ma for x in pair]


def add_second_curve(lab: Lab) -> None:
    """Another invented curve, stored as the CLI's ``curve add`` stores one."""
    content = (scenario_path().parent / "instrument" / "sr-curve-INVENTED.csv").read_bytes()
    db = lab.open()
    try:
        request = {"name": "second-INVENTED", "content": content, "filename": "c.csv"}
        screening.add_curve(db, "ines", request)
    finally:
        db.close()


async def test_a_curve_chosen_for_a_loan_in_a_form(lab: Lab) -> None:
    add_second_curve(lab)
    start = head(lab)
    async with lab.app().run_test(size=(80, 24)) as pilot:
        loan = await open_loan(pilot, 1)  # the shark teeth: no curve yet
        await pilot.press("5")
        await settle(pilot)
        said = loan.query_one("#screening-curve", Static)
        await until(pilot, lambda: "press u" in on_screen(said))
        await pilot.press("u")
        await settle(pilot)
        form = screen_as(pilot, ChooseCurveScreen)
        chooser = form.query_one("#f-curve", Select)
        await until(pilot, lambda: len(chooser._options) > 1)
        assert chooser.has_focus  # the loan is filled in: the cursor waits at the curve
        names = [value for _, value in chooser._options if value != Select.NULL]
        await pilot.press("enter", *(["down"] * (1 + names.index("second-INVENTED"))), "enter")
        await settle(pilot)
        await pilot.press("ctrl+s")
        await settle(pilot)
        assert screen_as(pilot, LoanScreen) is loan  # back on the loan, which reads again
        await until(pilot, lambda: "second-INVENTED" in on_screen(said))
    (event,) = events_after(lab, start)
    assert event.action == "loan.curve_set"
    (row,) = query(lab, select(Loan).where(Loan.reference == KF))
    (curve,) = query(lab, select(SrCurve).where(SrCurve.name == "second-INVENTED"))
    assert row.sr_curve_id == curve.id


def counted(lab: Lab) -> dict[str, int]:
    db = lab.open()
    try:
        return snapshot_counts(db)
    finally:
        db.close()


async def test_saving_without_a_curve_is_refused_and_writes_nothing(lab: Lab) -> None:
    start, before = head(lab), counted(lab)
    async with lab.app().run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.app.run_action("bench('loan_curve')")  # from the palette: nothing filled
        await settle(pilot)
        form = screen_as(pilot, ChooseCurveScreen)
        await pilot.press("ctrl+s")
        await settle(pilot)
        outcome = on_screen(form.query_one("#outcome", Static))
        assert outcome.startswith("✗") and "loan" in outcome
    assert head(lab) == start and events_after(lab, start) == []
    assert counted(lab) == before


def test_the_palette_reaches_every_loan_view() -> None:
    actions = {action for _, _, action in PALETTE}
    for view in ("plan", "results", "scale", "screening"):
        assert f"loan_view('{view}')" in actions
    assert "bench('loan_curve')" in actions


async def test_the_palette_on_a_loan_opens_its_screening(lab: Lab) -> None:
    async with lab.app().run_test(size=(80, 24)) as pilot:
        loan = await open_loan(pilot, 0)
        await pilot.app.run_action("loan_view('screening')")
        await settle(pilot)
        assert loan.query_one("#loan-tabs", TabbedContent).active == "tab-screening"
