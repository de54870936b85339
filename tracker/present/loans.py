"""Loans as people see them: the overview, the reconciliation per loan, a drilling plan."""

from __future__ import annotations

from rich import box
from rich.console import Group, RenderableType
from rich.table import Table
from rich.text import Text

from tracker.domain import precision
from tracker.domain.text_rules import visible
from tracker.present.bars import flag_lines, usage_bar
from tracker.present.text import days_left, plain_table
from tracker.services.loans.planning import Plan
from tracker.services.read.reconcile import LoanLine

BAR_WIDTH = 8


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
        due = (
            f"{line.due_on.isoformat()}\n{days_left(line.days_left)}"
            if line.status == "open"
            else line.status
        )
        sampled = sampled_of(line.sampled, line.specimens, line.max_specimens_sampled)
        table.add_row(
            Text.assemble(visible(line.reference), "\n", (f"{line.lender_code} {line.id}", "dim")),
            f"{sampled}\n{line.on_hand}/{line.specimens} on hand",
            Text.assemble(
                precision.used_of_limit(line.drilled_mg, line.max_total_mass_mg),
                "\n",
                usage_bar(line.used_fraction, BAR_WIDTH),
            ),
            due,
            flag_lines(line.flags),
        )
    return table


def sampled_of(sampled: int, specimens: int, limit: int | None = None) -> str:
    """Specimens sampled, said one way on every screen: of the specimens listed on the loan,
    then the loan's limit when it has one (``3/12 sampled (max 6)``)."""
    return f"{sampled}/{specimens} sampled" + (f" (max {limit})" if limit else "")


def _mg(value: float) -> str:
    """Masses a reader adds up (totals, a specimen's columns): always in mg."""
    return precision.milligrams(value)


def reconcile_summary(lines: list[LoanLine]) -> RenderableType:
    """Every loan's books in a few short lines (80 columns): drilled of its limit, specimens
    sampled, the powder dissolved, on hand and returned, and its flags. A whole lab's
    specimens run to tens of thousands of rows, more than anyone reads at once; a loan's
    rows are ``reconcile_tables``' job."""
    if not lines:
        return Text("No loans.")
    table = plain_table("loan", "drilled / limit", "powder", "flags")
    for line in lines:
        due = f"due {line.due_on.isoformat()}" if line.status == "open" else line.status
        sampled = sampled_of(line.sampled, line.specimens, line.max_specimens_sampled)
        table.add_row(
            Text.assemble(visible(line.reference), (f"\n{line.lender_code}\n{line.id}", "dim")),
            f"{precision.used_of_limit(line.drilled_mg, line.max_total_mass_mg)}\n{sampled}\n{due}",
            f"dissolved {_mg(line.dissolved_mg)}\non hand {_mg(line.powder_on_hand_mg)}\n"
            f"returned {_mg(line.powder_returned_mg)}",
            flag_lines(line.flags),
        )
    return table


def reconcile_tables(lines: list[LoanLine]) -> RenderableType:
    """One block per loan: its totals and terms, then a row per specimen."""
    if not lines:
        return Text("No loans.")
    blocks: list[RenderableType] = []
    for line in lines:
        limit = (
            precision.limit_mg(line.max_total_mass_mg)
            if line.max_total_mass_mg
            else "no total limit"
        )
        due = (
            f"due {line.due_on.isoformat()} ({days_left(line.days_left)})"
            if line.status == "open"
            else line.status
        )
        head = Text.assemble(
            (visible(line.reference), "bold"),
            f"  {line.lender_code}  {line.id}  terms v{line.terms_version}  {due}\n",
            f"drilled {precision.milligrams(line.drilled_mg, line.drilled_u_mg)} of {limit}; "
            f"{sampled_of(line.sampled, line.specimens, line.max_specimens_sampled)}; "
            f"dissolved {_mg(line.dissolved_mg)}; powder on hand "
            f"{_mg(line.powder_on_hand_mg)}; returned {_mg(line.powder_returned_mg)}\n",
            ("flags: " + (", ".join(line.flags) or "none"), "bold red" if line.flags else "green"),
        )
        table = plain_table(
            "specimen", "drilled / permitted", "dissolved", "on hand", "returned", "flags"
        )
        for s in line.specimen_lines:
            table.add_row(
                Text.assemble(f"{s.id}\n", (visible(s.catalog_number), "dim")),
                precision.used_of_limit(s.drilled_mg, s.permitted_mg),
                _mg(s.dissolved_mg),
                _mg(s.powder_on_hand_mg),
                _mg(s.powder_returned_mg),
                flag_lines(s.flags),
            )
        blocks += [head, table]
    return Group(*blocks)


def plan_table(plan: Plan) -> RenderableType:
    span = plan.specimens[0] if plan.specimens else None
    fraction = (
        f"{precision.number(span.mass_fraction_low, 4)}–"
        f"{precision.number(span.mass_fraction_high, 4)}"
        if span
        else precision.ABSENT
    )
    head = Text.assemble(
        (f"Plan for {plan.loan}", "bold"),
        f": {plan.tissue} as {plan.material} (mass fraction {fraction}), terms v"
        f"{plan.terms_version}\n",
        f"to drill in all {_mg(plan.total_to_drill_mg)}; loan total left "
        f"{_mg_or_none(plan.loan_remaining_before_mg)} → "
        f"{_mg_or_none(plan.loan_remaining_after_mg)}",
    )
    table = plain_table("specimen", "element", "powder needed", "on hand", "to drill", "verdict")
    for s in plan.specimens:
        verdict = ("yes: " if s.feasible else "NO: ") + s.reason
        table.add_row(
            Text.assemble(f"{s.id}\n", (visible(s.catalog_number), "dim")),
            precision.micrograms(s.element_needed_ug),
            _mg(s.powder_needed_mg),
            _mg(s.powder_on_hand_mg),
            _mg(s.to_drill_mg),
            verdict,
        )
    return Group(head, table)


def plan_text(plan: Plan) -> Text:
    """A plan in a few lines for the loan screen's Plan tab: the material, what the loan still
    allows before and after, and each specimen's verdict with the powder to drill."""
    text = Text()
    text.append(f"{plan.material} · {plan.tissue} · terms v{plan.terms_version}\n", style="bold")
    before, after = plan.loan_remaining_before_mg, plan.loan_remaining_after_mg
    text.append(f"loan allows {_more(before)} more; after this plan {_more(after)}\n")
    for s in plan.specimens:
        mark = "✓" if s.feasible else "✗"
        drill = precision.mass_mg(s.to_drill_mg)
        line = f"{mark} {s.id} {s.catalog_number}: drill {drill} — {s.reason}\n"
        text.append(visible(line), style="" if s.feasible else "red")
    return text


def _more(mg: float | None) -> str:
    """What a loan's total still allows: ``no limit`` when it has none."""
    return "no limit" if mg is None else precision.mass_mg(mg)


def _mg_or_none(value: float | None) -> str:
    return "no limit" if value is None else _mg(value)
