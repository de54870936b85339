"""Rich renderings of service views for people at a terminal.

No colour carries meaning on its own: every status is also written in words. Text from
the database (names, catalogue numbers) goes into ``Text`` through
:func:`tracker.domain.text_rules.visible`, so a hidden character in it is measured as
the ``<U+001B>`` it is shown as; the console (cli/state.py) shows any that remain.
"""

from typing import Any

from rich import box
from rich.console import Group, RenderableType
from rich.table import Table
from rich.text import Text
from rich.tree import Tree

from tracker.domain.text_rules import visible
from tracker.domain.units import format_mass_mg, format_value_u
from tracker.services.core.views import Done, EventView
from tracker.services.loans.planning import Plan
from tracker.services.read.lineage import ItemDetail, Node
from tracker.services.read.reconcile import LoanLine

BAR_WIDTH = 8


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


def usage_bar(fraction: float | None) -> Text:
    """A bar with the percentage written beside it (meaning never by colour alone)."""
    if fraction is None:
        return Text("no mass limit", style="dim")
    filled = min(BAR_WIDTH, round(fraction * BAR_WIDTH))
    style = "red" if fraction > 1 else "yellow" if fraction >= 0.9 else "green"
    return Text.assemble(
        ("█" * filled, style), ("░" * (BAR_WIDTH - filled), "dim"), f" {fraction * 100:.0f} %"
    )


def overview_table(lines: list[LoanLine]) -> RenderableType:
    """Fits 80 columns: each cell stacks two short lines instead of adding columns."""
    if not lines:
        return Text("No loans yet. Add one with `tracker loan add --help`.")
    table = Table(
        title="Loans, most urgent first", title_justify="left", box=box.SIMPLE_HEAD, padding=(0, 1)
    )
    table.add_column("loan", no_wrap=True)
    table.add_column("specimens", no_wrap=True)
    table.add_column("mass drilled", no_wrap=True)
    table.add_column("due", no_wrap=True)
    table.add_column("flags")
    for line in lines:
        allowed = f"/{line.max_total_mass_mg:g} mg" if line.max_total_mass_mg else " mg"
        due = (
            f"{line.due_on.isoformat()}\n{_days(line.days_left)}"
            if line.status == "open"
            else line.status
        )
        sampled = f"{line.sampled}/{line.max_specimens_sampled or '-'} sampled"
        table.add_row(
            Text.assemble(visible(line.reference), "\n", (f"{line.lender_code} {line.id}", "dim")),
            f"{sampled}\n{line.on_hand}/{line.specimens} on hand",
            Text.assemble(f"{line.drilled_mg:.3f}{allowed}\n", usage_bar(line.used_fraction)),
            due,
            "\n".join(line.flags) or "ok",
        )
    return table


def _days(days: int) -> str:
    if days < 0:
        return f"{-days} d overdue"
    return f"{days} d left"


def lineage_tree(node: Node) -> Tree:
    tree = Tree(_node_label(node))
    _add_children(tree, node)
    return tree


def _add_children(tree: Tree, node: Node) -> None:
    for child in node.children:
        branch = tree.add(_node_label(child))
        _add_children(branch, child)


def _node_label(node: Node) -> Text:
    text = Text.assemble((node.id, "bold cyan"), visible(f"  {node.label}"))
    if node.status:
        text.append(f"  [{node.status.replace('_', ' ')}]", style="dim")
    facts = _facts(node.facts)
    if facts:
        text.append(f"  {facts}")
    return text


def _facts(facts: dict[str, Any]) -> str:
    parts = []
    if "mass_mg" in facts:
        parts.append(format_mass_mg(facts["mass_mg"], facts["mass_u_mg"]))
    if "remaining_mg" in facts:
        parts.append(f"left {format_mass_mg(facts['remaining_mg'])}")
    if "solution_mass_g" in facts:
        parts.append(format_value_u(facts["solution_mass_g"], facts["solution_mass_u_g"], "g"))
        parts.append(f"left {facts['remaining_g']:.4f} g")
    if "mass_g" in facts:
        parts.append(format_value_u(facts["mass_g"], facts["mass_u_g"], "g"))
    for symbol, amount in facts.get("elements", {}).items():
        parts.append(f"{symbol} {format_value_u(amount['ug'], amount['u_ug'], 'µg')}")
    if facts.get("recovered_ug") is not None:
        parts.append(f"recovered {facts['recovered_ug']:.2f} µg")
    if facts.get("yield") is not None:
        parts.append(f"yield {facts['yield'] * 100:.1f} %")
    for result in facts.get("results", []):
        parts.append(_result_text(result))
    if facts.get("loaded_ug") is not None:
        parts.append(f"loaded {format_value_u(facts['loaded_ug'], facts['loaded_u_ug'], 'µg')}")
    return ", ".join(parts)


def _result_text(result: dict[str, Any]) -> str:
    """δ44/40 +0.884 ± 0.150 (n=4), or 87/86 0.708257 ± 0.000014 (n=3) for ratios."""
    delta = result["kind"] == "delta"
    digits, sign, symbol = (3, "+", "δ") if delta else (6, "", "")
    spread = "" if result["two_sd"] is None else f" ± {result['two_sd']:.{digits}f}"
    return f"{symbol}{result['ratio']} {result['value']:{sign}.{digits}f}{spread} (n={result['n']})"


def history_table(events: list[EventView]) -> Table:
    table = plain_table("#", "when (UTC)", "who", "action", "item")
    table.title, table.title_justify = "Custody history", "left"
    for event in events:
        table.add_row(
            str(event.seq),
            event.at.strftime("%Y-%m-%d %H:%M"),
            event.operator,
            event.action,
            event.object,
        )
    return table


def item_detail(detail: ItemDetail) -> RenderableType:
    parts: list[RenderableType] = []
    if detail.ancestors:
        path = " › ".join(f"{a.id} {a.label}" for a in detail.ancestors)
        parts.append(Text(visible(f"from: {path}"), style="dim"))
    if detail.location:
        parts.append(Text(visible(f"location: {detail.location}")))
    parts.append(lineage_tree(detail.item))
    parts.append(history_table(detail.history))
    return Group(*parts)


def _flags(flags: list[str]) -> str:
    return "\n".join(flags) or "ok"


def reconcile_tables(lines: list[LoanLine]) -> RenderableType:
    """One block per loan: its totals and terms, then a row per specimen."""
    if not lines:
        return Text("No loans.")
    blocks: list[RenderableType] = []
    for line in lines:
        limit = f"{line.max_total_mass_mg:g} mg" if line.max_total_mass_mg else "no total limit"
        due = (
            f"due {line.due_on.isoformat()} ({_days(line.days_left)})"
            if line.status == "open"
            else line.status
        )
        head = Text.assemble(
            (visible(line.reference), "bold"),
            f"  {line.lender_code}  {line.id}  terms v{line.terms_version}  {due}\n",
            f"drilled {format_value_u(line.drilled_mg, line.drilled_u_mg, 'mg')} of {limit}; "
            f"{line.sampled}/{line.max_specimens_sampled or '-'} specimens sampled; "
            f"dissolved {line.dissolved_mg:.3f} mg; powder on hand "
            f"{line.powder_on_hand_mg:.3f} mg; returned {line.powder_returned_mg:.3f} mg\n",
            ("flags: " + (", ".join(line.flags) or "none"), "bold red" if line.flags else "green"),
        )
        table = plain_table(
            "specimen", "drilled / permitted", "dissolved", "on hand", "returned", "flags"
        )
        for s in line.specimen_lines:
            permitted = f"/{s.permitted_mg:g} mg" if s.permitted_mg else " mg"
            table.add_row(
                Text.assemble(f"{s.id}\n", (visible(s.catalog_number), "dim")),
                f"{s.drilled_mg:.3f}{permitted}",
                f"{s.dissolved_mg:.3f}",
                f"{s.powder_on_hand_mg:.3f}",
                f"{s.powder_returned_mg:.3f}",
                _flags(s.flags),
            )
        blocks += [head, table]
    return Group(*blocks)


def plan_table(plan: Plan) -> RenderableType:
    span = plan.specimens[0] if plan.specimens else None
    fraction = f"{span.mass_fraction_low:.4f}–{span.mass_fraction_high:.4f}" if span else "—"
    head = Text.assemble(
        (f"Plan for {plan.loan}", "bold"),
        f": {plan.tissue} as {plan.material} (mass fraction {fraction}), terms v"
        f"{plan.terms_version}\n",
        f"to drill in all {plan.total_to_drill_mg:.3f} mg; loan total left "
        f"{_mg_or_dash(plan.loan_remaining_before_mg)} → "
        f"{_mg_or_dash(plan.loan_remaining_after_mg)}",
    )
    table = plain_table("specimen", "element µg", "powder needed", "on hand", "to drill", "verdict")
    for s in plan.specimens:
        verdict = ("yes: " if s.feasible else "NO: ") + s.reason
        table.add_row(
            Text.assemble(f"{s.id}\n", (visible(s.catalog_number), "dim")),
            f"{s.element_needed_ug:.2f}",
            f"{s.powder_needed_mg:.3f} mg",
            f"{s.powder_on_hand_mg:.3f} mg",
            f"{s.to_drill_mg:.3f} mg",
            verdict,
        )
    return Group(head, table)


def _mg_or_dash(value: float | None) -> str:
    return "no limit" if value is None else f"{value:.3f} mg"
