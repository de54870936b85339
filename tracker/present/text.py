"""The house table, the confirmation line, and the words confirming each bench action."""

from __future__ import annotations

from typing import Any

from rich import box
from rich.table import Table
from rich.text import Text

from tracker.domain import precision
from tracker.domain.text_rules import visible
from tracker.services.bench.columns import CutView
from tracker.services.core.views import (
    AliquotView,
    ConcentrationView,
    Done,
    PowderView,
    SolutionView,
)


def done(answer: Done[Any], what: str) -> Text:
    """One line confirming what was recorded, with the ledger event number."""
    return Text.assemble(
        ("recorded ", "green"), (visible(what), "bold"), f"  (ledger event #{answer.event_seq})"
    )


def plain_table(*headers: str) -> Table:
    """The house style for lists: a header rule, no cell borders, fits 80 columns."""
    table = Table(box=box.SIMPLE_HEAD, padding=(0, 1))
    for number, header in enumerate(headers):
        table.add_column(header, no_wrap=number == 0)  # IDs in the first column stay whole
    return table


def days_left(days: int) -> str:
    return f"{-days} d overdue" if days < 0 else f"{days} d left"


# What each bench action recorded, in a few words (the confirmation after `done`).


def drilled(item: PowderView) -> str:
    return f"{item.id} {precision.mass_mg(item.mass_mg, item.mass_u_mg)} {item.tissue}"


def dissolved(item: SolutionView) -> str:
    solution = precision.grams(item.solution_mass_g, item.solution_mass_u_g)
    powder = precision.mass_mg(item.powder_mass_mg, item.powder_mass_u_mg)
    return f"{item.id} {solution} from {powder}"


def concentration_recorded(item: ConcentrationView) -> str:
    value = precision.concentration(item.value_ug_per_g, item.u_ug_per_g)
    amount = precision.micrograms(item.element_ug, item.element_u_ug)
    return f"{item.element} {value} → {amount} in {item.solution}"


def aliquot_taken(item: AliquotView) -> str:
    amount = (
        f", {item.element} {precision.micrograms(item.element_ug, item.element_u_ug)}"
        if item.element_ug is not None
        else ""
    )
    return f"{item.id} {precision.grams(item.mass_g, item.mass_u_g)}{amount}"


def cut_recorded(item: CutView) -> str:
    ratio = (
        f", yield {precision.percent(item.yield_fraction, item.yield_u)}"
        if item.yield_fraction
        else ""
    )
    return f"{item.id} {item.name} cut{ratio}"


def blank_delta_set(ratio: str, delta_permil: float, batch: str) -> str:
    return f"blank δ{ratio} = {precision.delta(delta_permil)} for {batch}"
