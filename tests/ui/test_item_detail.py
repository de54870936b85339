"""An item's lineage at 80×24: a step whose line runs past the screen's edge is shown whole,
wrapped, under the tree when the cursor is on it."""

from __future__ import annotations

from textual.widgets import Static, Tree

from tests.ui.conftest import Lab, scan, settle, until
from tests.ui.test_loan_views import on_screen
from tracker.present.items import node_text
from tracker.services.read import lineage


async def test_the_highlighted_step_is_shown_whole_under_the_tree(lab: Lab) -> None:
    db = lab.open()
    try:
        detail = lineage.show_item(db, "SP-00004-Q")
    finally:
        db.close()
    powder = detail.item.children[0]
    whole = node_text(powder).plain
    assert len(whole) > 80  # the premise: its tree line cannot fit the screen
    async with lab.app().run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await scan(pilot, "SP-00004-Q")
        await settle(pilot)
        screen = pilot.app.screen
        shown = screen.query_one("#node-detail", Static)
        await until(pilot, lambda: "SP-00004-Q" in on_screen(shown))
        while not isinstance(pilot.app.focused, Tree):  # tab to the tree, as a person does
            await pilot.press("tab")
        await pilot.press("down")  # the cursor to the powder
        await until(pilot, lambda: powder.id in on_screen(shown))
        assert " ".join(on_screen(shown).split()) == " ".join(whole.split())
