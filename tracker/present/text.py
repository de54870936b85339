"""The house table, the confirmation line, and the words confirming each bench action."""

from __future__ import annotations

from typing import Any

from rich.text import Text

from tracker.domain import precision
from tracker.domain.text_rules import visible
from tracker.present.aligned import AlignedTable
from tracker.services.bench.columns import CutView
from tracker.services.core.views import (
    AliquotView,
    ConcentrationView,
    Done,
    PowderView,
    SolutionView,
)
from tracker.services.corrections.correcting import CorrectionView


def done(answer: Done[Any], what: str) -> Text:
    """One line confirming what was recorded, with the ledger event number."""
    return Text.assemble(
        ("recorded ", "green"), (visible(what), "bold"), f"  (ledger event #{answer.event_seq})"
    )


def plain_table(*headers: str, whole: int = 1, title: str | None = None) -> AlignedTable:
    """The house style for lists: a header rule, no cell borders, aligned plain text (long
    lists print quickly); the first ``whole`` columns (an ID) stay whole."""
    return AlignedTable(headers, whole, title)


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


def corrected(item: CorrectionView) -> str:
    """What a correction changed, and the sessions whose results were reduced again."""
    reduced = item.effects.get("sessions_reduced") or []
    again = f"; reduced again: {', '.join(reduced)}" if reduced else ""
    return f"{item.item} {item.quantity} corrected{again}"
