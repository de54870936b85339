"""The concentration form refuses a value the dissolved powder cannot hold, and records it
only once a person confirms it (typed into the form, then asked once more), as the drill
form does with an override. Judged by what the database holds afterwards."""

from __future__ import annotations

import json

from sqlalchemy import select
from sqlalchemy.orm import selectinload
from textual.widgets import Static

from tests.ui.conftest import Lab, events_after, head, query, screen_as, settle, text_of, type_into
from tracker.domain.models import Concentration, Powder, Solution
from tracker.ui.screens.confirm import ConfirmScreen
from tracker.ui.screens.form import FormScreen


def _solution_of_known_material(lab: Lab) -> Solution:
    found = query(
        lab,
        select(Solution)
        .join(Powder)
        .where(Powder.material.is_not(None))
        .options(selectinload(Solution.powder))
        .order_by(Solution.id),
    )
    assert found, "the demo has no solution of a powder with a material"
    solution: Solution = found[0]
    return solution


def _impossible(solution: Solution) -> str:
    """Ten times the concentration the whole powder would give if it were pure element."""
    pure = 1000 * float(solution.powder_mass_mg) / float(solution.solution_mass_g)
    return f"{round(10 * pure)} ug/g"


async def _type_and_save(lab: Lab, typed: dict[str, str], confirm: bool) -> tuple[str, bool]:
    """The outcome line, and whether the form asked before saving."""
    async with lab.app("priya").run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.app.run_action("bench('concentration')")
        await settle(pilot)
        screen = screen_as(pilot, FormScreen)
        for name, text in typed.items():
            await type_into(pilot, name, text)
        await pilot.press("ctrl+s")
        await settle(pilot)
        asked = isinstance(pilot.app.screen, ConfirmScreen)
        if asked:
            await pilot.press("y" if confirm else "n")
            await settle(pilot)
        if pilot.app.screen is not screen:
            return "saved: the form made way for what it made", asked
        return text_of(screen.query_one("#outcome", Static)), asked


async def test_an_impossible_value_is_refused_then_recorded_once_confirmed(lab: Lab) -> None:
    solution = _solution_of_known_material(lab)
    typed = {
        "solution": solution.public_id,
        "element": "Ca",
        "value": _impossible(solution),
        "relative-uncertainty-percent": "2",
    }
    start = head(lab)
    said, asked = await _type_and_save(lab, typed, confirm=True)
    assert not asked and "refused" in said and "likely a typo" in said, said
    assert head(lab) == start  # nothing written
    said, asked = await _type_and_save(lab, typed | {"confirm-implausible": "yes"}, confirm=True)
    assert asked and "refused" not in said, said
    (event,) = events_after(lab, start)
    assert event.action == "concentration.recorded"
    assert json.loads(event.payload)["confirmed_implausible"]["material"]
    rows = query(lab, select(Concentration).where(Concentration.solution_id == solution.id))
    assert any(r.recorded_by == "priya" for r in rows)


async def test_a_confirmation_declined_saves_nothing(lab: Lab) -> None:
    solution = _solution_of_known_material(lab)
    typed = {
        "solution": solution.public_id,
        "element": "Ca",
        "value": _impossible(solution),
        "relative-uncertainty-percent": "2",
        "confirm-implausible": "yes",
    }
    start = head(lab)
    said, asked = await _type_and_save(lab, typed, confirm=False)
    assert asked and "nothing saved" in said, said
    assert head(lab) == start
