"""An item as people see it: its lineage tree with the facts of each node, its history.

:func:`node_text` is the one line of a lineage node — the CLI's ``tracker show`` tree and
the interface's lineage tree both draw it — and :func:`facts_parts` the words for each
kind of facts (``services/read/item_facts.py``), written by ``domain/precision.py``.
"""

from __future__ import annotations

from rich.console import Group, RenderableType
from rich.text import Text
from rich.tree import Tree

from tracker.domain import precision
from tracker.domain.recovery import recovery_words
from tracker.domain.text_rules import visible
from tracker.present.text import plain_table
from tracker.services.core.views import EventView
from tracker.services.read.item_facts import (
    AliquotFacts,
    CutFacts,
    ItemFacts,
    LoanFacts,
    PositionFacts,
    PowderFacts,
    RecoveryFacts,
    SolutionFacts,
)
from tracker.services.read.lineage import ItemDetail, Node, OverrideView

SEPARATOR = " · "


def facts_parts(facts: ItemFacts | None) -> list[str]:
    """The facts of one node in words, each with its unit (nothing for a bare label)."""
    match facts:
        case LoanFacts():
            return [f"lent by {visible(facts.lender)}"]
        case PowderFacts():
            return [
                precision.mass_mg(facts.mass_mg, facts.mass_u_mg),
                f"left {precision.mass_mg(facts.remaining_mg, facts.remaining_u_mg)}",
            ]
        case SolutionFacts():
            return [
                f"{precision.mass_mg(facts.powder_mass_mg, facts.powder_mass_u_mg)} powder",
                precision.grams(facts.solution_mass_g, facts.solution_mass_u_g),
                f"left {precision.grams(facts.remaining_g, facts.remaining_u_g)}",
                *(
                    f"{symbol} {precision.micrograms(amount.ug, amount.u_ug)}"
                    for symbol, amount in facts.elements.items()
                ),
                *(recovery_text(r) for r in facts.recoveries),
            ]
        case AliquotFacts():
            return [
                precision.grams(facts.mass_g, facts.mass_u_g),
                *(
                    f"{symbol} {precision.micrograms(amount.ug, amount.u_ug)}"
                    for symbol, amount in facts.elements.items()
                ),
            ]
        case PositionFacts():
            return _position_parts(facts)
        case CutFacts():
            return _cut_parts(facts)
    return []


def recovery_text(r: RecoveryFacts) -> str:
    """A dissolution recovery in words (:func:`tracker.domain.recovery.recovery_words`)."""
    return recovery_words(r.as_recovery())


def _position_parts(facts: PositionFacts) -> list[str]:
    parts = []
    if facts.loaded_ug is not None:
        parts.append(f"loaded {precision.micrograms(facts.loaded_ug, facts.loaded_u_ug)}")
    if facts.removed_at is not None:
        day = facts.removed_at.date().isoformat()
        parts.append(f"removed from the batch {day}: {visible(facts.removal_reason or '')}")
    return parts


def _cut_parts(facts: CutFacts) -> list[str]:
    parts = []
    if facts.recovered_ug is not None:
        parts.append(f"recovered {precision.micrograms(facts.recovered_ug, facts.recovered_u_ug)}")
    if facts.yield_fraction is not None:
        parts.append(f"yield {precision.percent(facts.yield_fraction, facts.yield_u)}")
    for r in facts.results:
        symbol = "δ" if r.kind == "delta" else ""
        parts.append(f"{symbol}{r.ratio} {precision.result(r.kind, r.value, r.two_sd, r.n)}")
    return parts


def node_text(node: Node) -> Text:
    """One lineage node: ID, what it is, status in words, and its amounts with units."""
    text = Text()
    text.append(node.id, style="bold cyan")
    text.append(visible(f"  {node.label}"))
    if node.status:
        text.append(f"{SEPARATOR}{node.status.replace('_', ' ')}", style="dim")
    for part in facts_parts(node.facts):
        text.append(f"{SEPARATOR}{part}")
    return text


def lineage_tree(node: Node) -> Tree:
    tree = Tree(node_text(node))
    _add_children(tree, node)
    return tree


def _add_children(tree: Tree, node: Node) -> None:
    for child in node.children:
        _add_children(tree.add(node_text(child)), child)


def history_table(events: list[EventView]) -> RenderableType:
    table = plain_table("#", "when (UTC)", "who", "action", "item", title="Custody history")
    for event in events:
        table.add_row(
            str(event.seq),
            event.at.strftime("%Y-%m-%d %H:%M"),
            event.operator,
            event.said,
            event.object,
        )
    return table


def override_text(o: OverrideView) -> str:
    """A drill let past the loan's limits, said the same way on every screen."""
    return (
        f"override {o.drilled_on} {o.powder} ({o.catalog_number}) "
        f"{precision.milligrams(o.mass_mg)} by {o.by}: {o.reason}"
    )


def ancestry(ancestors: list[Node]) -> str:
    """Where an item came from, lender first, each step by its ID and the name people know
    it by (``KFMNH LE-00001-4 › KF-2026-014 LN-00002-I``), or a dash for a lender."""
    return " › ".join(f"{a.name} {a.id}" for a in ancestors) or "—"


def item_detail(detail: ItemDetail) -> RenderableType:
    parts: list[RenderableType] = []
    if detail.ancestors:
        parts.append(Text(visible(f"from: {ancestry(detail.ancestors)}"), style="dim"))
    if detail.location:
        parts.append(Text(visible(f"location: {detail.location}")))
    parts.append(lineage_tree(detail.item))
    parts.extend(Text(visible(override_text(o)), style="bold red") for o in detail.overrides)
    parts.append(history_table(detail.history))
    return Group(*parts)
