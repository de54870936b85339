"""Keys that never lose work: shortcuts never fire while a person types, a form never opens on
another form, a footer click types nothing, every tab has its number key, and the cursor
waits in the first field left to fill."""

from __future__ import annotations

from textual.pilot import Pilot
from textual.widgets import Input, TabbedContent
from textual.widgets._footer import FooterKey

from tests.ui.conftest import (
    Lab,
    events_after,
    head,
    scan,
    screen_as,
    settle,
    until,
)
from tracker.ui.screens.confirm import ConfirmScreen
from tracker.ui.screens.drill import DrillScreen
from tracker.ui.screens.form import FormScreen
from tracker.ui.screens.loan import LoanScreen

LOAN = "KF-2026-014"  # the demo's shark-tooth loan; it permits one tissue


async def open_drill_form(pilot: Pilot[None]) -> DrillScreen:
    """The app settled, then d: the drill form, as a person opens it."""
    await settle(pilot)
    await pilot.press("d")
    await settle(pilot)
    return screen_as(pilot, DrillScreen)


async def test_a_footer_key_clicked_runs_its_action_and_types_nothing(lab: Lab) -> None:
    async with lab.app().run_test(size=(120, 36)) as pilot:
        await settle(pilot)
        pilot.app.push_screen(LoanScreen(LOAN))
        await settle(pilot)
        loan = screen_as(pilot, LoanScreen)
        chosen = loan.selected_specimen()
        assert chosen is not None
        drill_key = next(k for k in loan.query(FooterKey) if k.key == "d")
        await pilot.click(drill_key)
        await settle(pilot)
        form = screen_as(pilot, DrillScreen)
        # the action ran with the loan's highlighted specimen; no "d" reached any field
        assert form.id_input("specimen").value == chosen
        typed = {box.id: box.value for box in form.query(Input)}
        assert typed["f-tissue"] in ("", "enameloid")  # empty, or filled in from the terms
        assert not any(v.endswith("d") for k, v in typed.items() if k != "f-tissue"), typed


async def test_number_keys_open_every_tab_of_a_loan(lab: Lab) -> None:
    async with lab.app().run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        pilot.app.push_screen(LoanScreen(LOAN))
        await settle(pilot)
        tabs = screen_as(pilot, LoanScreen).query_one("#loan-tabs", TabbedContent)
        for key, pane in (("2", "tab-terms"), ("3", "tab-plan"), ("1", "tab-specimens")):
            await pilot.press(key)
            await settle(pilot)
            assert tabs.active == pane


async def test_a_bench_key_on_an_open_form_opens_no_second_form(lab: Lab) -> None:
    async with lab.app().run_test(size=(80, 24)) as pilot:
        form = await open_drill_form(pilot)
        form.set_focus(None)  # the focus outside every field, as after a click on the intro
        for key in "csakm":
            await pilot.press(key)
            await settle(pilot)
        assert pilot.app.screen is form
        assert sum(isinstance(s, FormScreen) for s in pilot.app.screen_stack) == 1


async def test_typing_never_lands_after_an_auto_filled_tissue(lab: Lab) -> None:
    async with lab.app().run_test(size=(80, 24)) as pilot:
        form = await open_drill_form(pilot)
        tissue = form.query_one("#f-tissue", Input)
        await scan(pilot, "SP-00010-U")  # on hand; its loan permits one tissue
        await until(pilot, lambda: bool(tissue.value))  # filled in from the loan's terms
        focused = pilot.app.focused
        assert isinstance(focused, Input) and focused is not tissue and not focused.value
        await pilot.press("x")
        await settle(pilot)
        typed_in = pilot.app.focused
        assert typed_in is focused and isinstance(typed_in, Input) and typed_in.value == "x"
        assert tissue.value == "enameloid"


async def test_a_refusal_is_cleared_once_the_form_changes(lab: Lab) -> None:
    async with lab.app().run_test(size=(80, 24)) as pilot:
        form = await open_drill_form(pilot)
        await pilot.press("ctrl+s")  # nothing filled in: refused
        await settle(pilot)
        outcome = form.query_one("#outcome")
        assert outcome.has_class("-error")
        focused = pilot.app.focused
        assert isinstance(focused, Input)
        await pilot.press("S")  # the person starts to put it right
        await settle(pilot)
        assert not outcome.has_class("-error")
        assert "refused" not in str(outcome.render())


async def test_an_override_answered_no_writes_nothing(lab: Lab) -> None:
    start = head(lab)
    async with lab.app("ines").run_test(size=(80, 24)) as pilot:  # ines is a manager
        form = await open_drill_form(pilot)
        await scan(pilot, "SP-00010-U")
        for name, value in (
            ("tare", "1200.000 mg"),
            ("gross", "1201.500 mg"),  # over the specimen's allowance
            ("override-reason", "the lender agreed by telephone"),
        ):
            form.query_one(f"#f-{name}", Input).value = value
        await pilot.press("ctrl+s")
        await settle(pilot)
        screen_as(pilot, ConfirmScreen)
        await pilot.press("n")
        await settle(pilot)
        assert screen_as(pilot, DrillScreen) is form
    assert events_after(lab, start) == []
