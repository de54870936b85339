"""The loan screen's plan with every option the command line's ``plan`` has: typed into the
plan form as a person types, and the plan shown held to the service's answer for the same
request, written out here by hand."""

from __future__ import annotations

from typing import Any

from textual.widgets import Input, Static

from tests.ui.conftest import Lab, screen_as, settle, text_of, type_into
from tracker.present.loans import plan_text
from tracker.services.core.inputs import parse
from tracker.services.loans import planning
from tracker.services.loans.planning import PlanRequest
from tracker.ui.screens.loan import LoanScreen
from tracker.ui.screens.plan_form import OPTIONS, PlanFormScreen

KESTREL = "KF-2026-014"  # the demo's shark-tooth loan: enameloid, open
TYPED = {  # every option, none at its default
    "ug_per_analysis": "30",
    "replicates": "2",
    "element": "Ca",
    "expected_yield": "0.8",
    "material": "bone-dentine bioapatite",
    "tissue": "enameloid",
    "margin_percent": "35",
    "aliquot_share": "0.2",
    "min_powder_mg": "0.8",
}
BY_HAND: dict[str, Any] = {
    "target": KESTREL,
    "material": "bone-dentine bioapatite",
    "tissue": "enameloid",
    "margin_percent": 35,
    "aliquot_share": 0.2,
    "min_powder_mg": 0.8,
    "analyses": [{"element": "Ca", "ug_per_analysis": 30, "replicates": 2, "expected_yield": 0.8}],
}


async def _open_plan_form(lab: Lab, pilot: Any) -> PlanFormScreen:
    await settle(pilot)
    pilot.app.open_id(KESTREL)
    await settle(pilot)
    await pilot.press("p")
    await settle(pilot)
    return screen_as(pilot, PlanFormScreen)


def test_the_form_offers_every_option_of_the_plan_request() -> None:
    fields = set(PlanRequest.model_fields) - {"target", "analyses"}
    fields |= set(planning.PlannedAnalysis.model_fields)
    assert {option.name for option in OPTIONS} == fields
    assert set(TYPED) == fields


async def test_a_plan_with_every_option_typed_matches_the_service(lab: Lab) -> None:
    async with lab.app("tomas").run_test(size=(80, 24)) as pilot:
        form = await _open_plan_form(lab, pilot)
        assert all(not box.value for box in form.query(Input))  # defaults are hints, not values
        for name, text in TYPED.items():
            await type_into(pilot, name, text, gap=0.05)
        await pilot.press("ctrl+s")
        await settle(pilot)
        screen = screen_as(pilot, LoanScreen)
        assert screen.plan_request is not None
        shown = text_of(screen.query_one("#plan", Static))
        sent = parse(PlanRequest, screen.plan_request)
    wanted = parse(PlanRequest, BY_HAND)
    assert sent.model_copy(update={"target": KESTREL}) == wanted  # every option went through
    db = lab.open()
    try:
        answer = planning.plan(db, BY_HAND)
        by_default = planning.plan(db, {"target": KESTREL, "analyses": [{"ug_per_analysis": 30}]})
    finally:
        db.close()
    assert shown == plan_text(answer).plain
    assert answer != by_default  # the options changed the plan, so the test can tell
    assert answer.material == "bone-dentine bioapatite"


async def test_a_bad_option_is_refused_on_the_form(lab: Lab) -> None:
    async with lab.app("tomas").run_test(size=(80, 24)) as pilot:
        form = await _open_plan_form(lab, pilot)
        await type_into(pilot, "ug_per_analysis", "2", gap=0.05)
        await type_into(pilot, "expected_yield", "1.5", gap=0.05)
        await pilot.press("ctrl+s")
        await settle(pilot)
        assert pilot.app.screen is form  # still asking
        outcome = text_of(form.query_one("#outcome", Static))
        assert "expected-yield" in outcome and "1.5" in outcome, outcome
        assert pilot.app.focused is form.query_one("#f-expected_yield", Input)


async def test_the_palette_on_a_loan_opens_the_plan_form(lab: Lab) -> None:
    app = lab.app("tomas")
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        app.open_id(KESTREL)
        await settle(pilot)
        await pilot.app.run_action("loan_view('plan')")  # the palette's entry
        await settle(pilot)
        screen_as(pilot, PlanFormScreen)
