"""The main screens as a person sees them on the demo. The snapshot tests check them and the
interface page (docs/interface.md) shows the committed snapshots, so its pictures are
exactly what the tests check."""

from __future__ import annotations

from collections.abc import Awaitable, Callable
from dataclasses import dataclass

from textual.pilot import Pilot
from textual.widgets import DataTable, Input, TabbedContent

from tests.ui.conftest import scan, settle, until
from tracker.ui.screens.drill import DrillScreen


@dataclass(frozen=True)
class Scene:
    name: str
    size: tuple[int, int]
    steps: Callable[[Pilot[None]], Awaitable[None]]

    async def run(self, pilot: Pilot[None]) -> None:
        """The steps, then every text box's cursor held on: a blink caught mid-way on a busy
        machine would make the same screen a different picture."""
        await self.steps(pilot)
        for box in pilot.app.screen.query(Input):
            box.cursor_blink = False
        await settle(pilot)


async def _overview(pilot: Pilot[None]) -> None:
    await settle(pilot)


async def _loan(pilot: Pilot[None]) -> None:
    await settle(pilot)
    await pilot.press("down", "enter")  # KF-2026-014, the shark teeth
    await settle(pilot)


async def _item(pilot: Pilot[None]) -> None:
    await settle(pilot)
    await scan(pilot, "SP-00004-Q")


async def _drill(pilot: Pilot[None]) -> None:
    await settle(pilot)
    await pilot.press("d")
    await settle(pilot)
    await scan(pilot, "SP-00010-U")
    screen = pilot.app.screen
    screen.query_one("#f-tissue", Input).value = "enameloid"
    screen.query_one("#f-tare", Input).value = "1200.000 mg"
    screen.query_one("#f-gross", Input).value = "1201.500 mg"
    await until(pilot, lambda: _previewed_mass(screen) is not None)
    await pilot.press("ctrl+s")
    await settle(pilot)
    await pilot.pause(0.3)
    await settle(pilot)


def _previewed_mass(screen: object) -> float | None:
    view = screen.preview_view if isinstance(screen, DrillScreen) else None
    return None if view is None else view.mass_mg


async def _batch(pilot: Pilot[None]) -> None:
    await settle(pilot)
    await scan(pilot, "CB-00001-G")


async def _session(pilot: Pilot[None]) -> None:
    await settle(pilot)
    await scan(pilot, "IS-00001-A")


async def _drift(pilot: Pilot[None]) -> None:
    await _session(pilot)
    pilot.app.screen.query_one("#session-tabs", TabbedContent).active = "tab-drift"
    await settle(pilot)


async def _unmatched(pilot: Pilot[None]) -> None:
    """The demo's calcium rerun, whose samples were typed by name: its Unmatched rows tab."""
    await settle(pilot)
    await scan(pilot, "IS-00003-6")
    await pilot.press("2")
    await settle(pilot)


async def _matched_by_name(pilot: Pilot[None]) -> None:
    await _unmatched(pilot)
    await pilot.press("n")
    await settle(pilot)


async def _match_row(pilot: Pilot[None]) -> None:
    """m on the rerun's last unmatched row ("tooth 14 rerun"), its catalogue number typed."""
    await _unmatched(pilot)
    pilot.app.screen.query_one("#unmatched").focus()
    await pilot.press("down", "down")
    await settle(pilot)
    await pilot.press("m")
    await settle(pilot)
    pilot.app.screen.query_one("#f-target", Input).value = "KFMNH P 20313"
    await settle(pilot)


async def _labels(pilot: Pilot[None]) -> None:
    await settle(pilot)
    await pilot.press("f5")
    await settle(pilot)
    pilot.app.screen.query_one("#queue").focus()
    await pilot.press("v")
    await settle(pilot)


async def _ledger(pilot: Pilot[None]) -> None:
    await settle(pilot)
    await pilot.press("f6")
    await settle(pilot)
    await pilot.press("v")
    await settle(pilot)


async def _report(pilot: Pilot[None]) -> None:
    await _loan(pilot)
    await pilot.press("R")
    await settle(pilot)


async def _terms(pilot: Pilot[None]) -> None:
    await _loan(pilot)
    await pilot.press("2")  # the terms tab: versions, overrides, documents
    await settle(pilot)


async def _override_asked(pilot: Pilot[None]) -> None:
    await _drill(pilot)  # ines, a manager: the override field is open to her
    pilot.app.screen.query_one("#f-override-reason", Input).value = "lender agreed by phone"
    await pilot.press("ctrl+s")
    await settle(pilot)


async def _dispose(pilot: Pilot[None]) -> None:
    await settle(pilot)
    await pilot.app.run_action("bench('dispose')")
    await settle(pilot)


async def _plan_options(pilot: Pilot[None]) -> None:
    await _loan(pilot)
    await pilot.press("p")  # every option of the plan, defaults beside the labels
    await settle(pilot)
    for name, value in (("ug_per_analysis", "30"), ("replicates", "2"), ("margin_percent", "35")):
        pilot.app.screen.query_one(f"#f-{name}", Input).value = value


async def _plan(pilot: Pilot[None]) -> None:
    await _plan_options(pilot)
    await pilot.press("ctrl+s")
    await settle(pilot)


async def _remove_refused(pilot: Pilot[None]) -> None:
    await _batch(pilot)
    pilot.app.screen.query_one("#positions", DataTable).move_cursor(row=1)  # column 2: it ran
    await pilot.press("ctrl+d")
    await settle(pilot)
    pilot.app.screen.query_one("#f-reason", Input).value = "scanned the wrong tube"
    await pilot.press("ctrl+s")
    await settle(pilot)
    await pilot.press("y")


async def _correct_concentration(pilot: Pilot[None]) -> None:
    await _item_then_form(pilot, "SO-00001-M", "correct_concentration")


async def _concentration_refused(pilot: Pilot[None]) -> None:
    """A value the solution's powder cannot hold, refused as a likely typo."""
    await _item_then_form(pilot, "SO-00001-M", "concentration")
    pilot.app.screen.query_one("#f-element", Input).value = "Ca"
    pilot.app.screen.query_one("#f-value", Input).value = "81200 ug/g"
    pilot.app.screen.query_one("#f-relative-uncertainty-percent", Input).value = "2"
    await pilot.press("ctrl+s")
    await settle(pilot)


async def _correct_recovery(pilot: Pilot[None]) -> None:
    await _item_then_form(pilot, "CU-00004-F", "correct_recovery")


async def _specimen_photo(pilot: Pilot[None]) -> None:
    await _item_then_form(pilot, "SP-00004-Q", "specimen_photo")


async def _item_then_form(pilot: Pilot[None], item: str, form: str) -> None:
    """The form opened from the palette on an item's screen: the item is filled in."""
    await settle(pilot)
    await scan(pilot, item)
    await settle(pilot)
    await pilot.app.run_action(f"bench('{form}')")
    await settle(pilot)


async def _loan_attach(pilot: Pilot[None]) -> None:
    await _loan(pilot)
    await pilot.app.run_action("bench('loan_attach')")
    await settle(pilot)


async def _labels_reprint(pilot: Pilot[None]) -> None:
    await settle(pilot)
    await pilot.press("f5")
    await settle(pilot)
    pilot.app.screen.query_one("#queue").focus()
    await pilot.press("R")


async def _brachiopods(pilot: Pilot[None], *keys: str) -> None:
    """MDGC/LN/0457 (the most urgent loan: Sr results and a curve), then ``keys``."""
    await settle(pilot)
    await pilot.press("enter")
    await settle(pilot)
    for key in keys:
        await pilot.press(key)
        await settle(pilot)


async def _loan_results(pilot: Pilot[None]) -> None:
    await _brachiopods(pilot, "4", "v", "down", "down", "enter")  # on Seawater in-house


async def _loan_screening(pilot: Pilot[None]) -> None:
    await _brachiopods(pilot, "5")


async def _loan_curve(pilot: Pilot[None]) -> None:
    await _brachiopods(pilot, "5", "u")
    await settle(pilot)


async def _reference_chart(pilot: Pilot[None]) -> None:
    """The palette's control chart on the demo: SRM 915b's δ44/40 in its two sessions."""
    await settle(pilot)
    await pilot.app.run_action("reference_chart")
    await settle(pilot)


async def _help(pilot: Pilot[None]) -> None:
    await settle(pilot)
    await pilot.press("f1")
    await settle(pilot)


SCENES = [
    Scene("overview-80x24", (80, 24), _overview),
    Scene("overview-120x36", (120, 36), _overview),
    Scene("loan-80x24", (80, 24), _loan),
    Scene("item-80x24", (80, 24), _item),
    Scene("drill-refused-80x24", (80, 24), _drill),
    Scene("drill-refused-120x40", (120, 40), _drill),
    Scene("batch-120x36", (120, 36), _batch),
    Scene("session-120x36", (120, 36), _session),
    Scene("drift-120x36", (120, 36), _drift),
    Scene("labels-100x32", (100, 32), _labels),
    Scene("ledger-120x36", (120, 36), _ledger),
    Scene("report-120x36", (120, 36), _report),
    Scene("help-80x24", (80, 24), _help),
    # every screen at 80×24 too: nothing that matters may be cut off on a small terminal
    Scene("terms-80x24", (80, 24), _terms),
    Scene("batch-80x24", (80, 24), _batch),
    Scene("session-80x24", (80, 24), _session),
    Scene("drift-80x24", (80, 24), _drift),
    Scene("labels-80x24", (80, 24), _labels),
    Scene("ledger-80x24", (80, 24), _ledger),
    Scene("report-80x24", (80, 24), _report),
    Scene("override-asked-80x24", (80, 24), _override_asked),
    Scene("dispose-80x24", (80, 24), _dispose),
    Scene("plan-options-80x24", (80, 24), _plan_options),
    Scene("plan-80x24", (80, 24), _plan),
    Scene("batch-remove-refused-80x24", (80, 24), _remove_refused),
    Scene("correct-concentration-80x24", (80, 24), _correct_concentration),
    Scene("concentration-refused-80x24", (80, 24), _concentration_refused),
    Scene("correct-recovery-80x24", (80, 24), _correct_recovery),
    Scene("specimen-photo-80x24", (80, 24), _specimen_photo),
    Scene("loan-attach-80x24", (80, 24), _loan_attach),
    Scene("labels-reprint-80x24", (80, 24), _labels_reprint),
    Scene("loan-results-80x24", (80, 24), _loan_results),
    Scene("loan-screening-80x24", (80, 24), _loan_screening),
    Scene("loan-curve-80x24", (80, 24), _loan_curve),
    Scene("unmatched-80x24", (80, 24), _unmatched),
    Scene("matched-by-name-80x24", (80, 24), _matched_by_name),
    Scene("match-row-80x24", (80, 24), _match_row),
    Scene("reference-chart-80x24", (80, 24), _reference_chart),
]
