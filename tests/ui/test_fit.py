"""At the bench's 80×24 a refused drill leaves nothing hidden: the allowance whole, the
refusal whole with who may override it, and the override field in sight with the cursor in
it; a manager then types the reason, confirms, and the drill is recorded with it."""

from __future__ import annotations

from sqlalchemy import select
from textual.widget import Widget
from textual.widgets import Input, Static

from tests.ui.conftest import Lab, events_after, head, query, scan, settle, type_into, until
from tests.ui.test_flows import previewed, set_field
from tests.ui.test_keys import open_drill_form
from tracker.domain.models import Powder
from tracker.ui.screens.confirm import ConfirmScreen
from tracker.ui.screens.drill import DrillScreen
from tracker.ui.screens.item import ItemScreen

BENCH = (80, 24)


def whole(widget: Static) -> bool:
    """All the widget's text is drawn: the lines it needs fit the lines it was given."""
    needed = widget.get_content_height(widget.size, widget.app.size, widget.content_size.width)
    return 0 < needed <= widget.content_size.height


def in_sight(widget: Widget, within: Widget) -> bool:
    return widget.region.height > 0 and within.region.contains_region(widget.region)


async def test_a_refused_drill_shows_allowance_refusal_and_override_together(lab: Lab) -> None:
    start = head(lab)
    async with lab.app("ines").run_test(size=BENCH) as pilot:  # ines is a manager
        form = await open_drill_form(pilot)
        await scan(pilot, "SP-00010-U")
        set_field(form, "tare", "1200.000 mg")
        set_field(form, "gross", "1201.500 mg")  # over the specimen's allowance
        await until(pilot, lambda: previewed(form, 1.5))
        await pilot.press("ctrl+s")
        await settle(pilot)
        preview, outcome = (form.query_one(f"#{n}", Static) for n in ("preview", "outcome"))
        reason = form.query_one("#f-override-reason", Input)
        assert "a manager may override" in str(outcome.render())
        assert whole(preview) and whole(outcome)
        assert reason.has_focus and in_sight(reason, form.query_one("#form"))
        for shown in (preview, outcome):
            assert in_sight(shown, form)
        await type_into(pilot, "override-reason", "lender agreed by telephone")
        await pilot.press("ctrl+s")
        await settle(pilot)
        assert isinstance(pilot.app.screen, ConfirmScreen)
        await pilot.press("y")
        await until(pilot, lambda: isinstance(pilot.app.screen, ItemScreen))
    powders = query(lab, select(Powder).where(Powder.specimen_id == 10).order_by(Powder.id))
    assert powders[-1].override_reason == "lender agreed by telephone"
    assert powders[-1].drilled_by == "ines"
    assert [e.action for e in events_after(lab, start)] == ["powder.drilled"]
    assert isinstance(form, DrillScreen)
