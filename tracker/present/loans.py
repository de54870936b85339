"""Loans as people see them: the overview, the reconciliation per loan, a drilling plan."""

from __future__ import annotations

from rich import box
from rich.console import Console, ConsoleOptions, Group, RenderableType, RenderResult
from rich.measure import Measurement
from rich.table import Table
from rich.text import Text

from tracker.domain import precision
from tracker.domain.text_rules import visible
from tracker.present.bars import flag_cell, flag_lines, usage_bar
from tracker.present.text import days_left, plain_table
from tracker.services.loans.planning import Plan
from tracker.services.read.reconcile import LoanLine

BAR_WIDTH = 8


def overview_table(lines: list[LoanLine]) -> RenderableType:
    """Fits 80 columns: each cell stacks two short lines instead of adding columns, and the
    flags take the width the other columns leave, wrapped whole, or go under the table
    when too little is left (never cut short)."""
    if not lines:
        return Text("No loans yet. Add one with `tracker loan add --help`.")
    return _Overview(lines)


FLAG_ROOM = 24  # the narrowest flags column worth drawing; narrower, they go under the table


class _Overview:
    """The overview, laid out when the terminal's width is known."""

    def __init__(self, lines: list[LoanLine]) -> None:
        self.lines = lines

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        bare = _overview_columns(self.lines, None)
        room = options.max_width - Measurement.get(console, options, bare).maximum - 3
        if room >= FLAG_ROOM:
            yield _overview_columns(self.lines, room)
            return
        yield bare
        flagged = [line for line in self.lines if line.flags]
        if flagged:
            yield Text("Flags", style="bold")
        for line in flagged:
            yield Text.assemble(f"  {visible(line.reference)}\n", _indented(line.flags, options))


def _indented(flags: list[str], options: ConsoleOptions) -> Text:
    cell = flag_cell(flags, max(FLAG_ROOM, options.max_width - 4))
    indented = Text("    ")
    for part in cell.split("\n", allow_blank=True):
        indented.append_text(part)
        indented.append("\n    ")
    indented.right_crop(5)
    return indented


def _overview_columns(lines: list[LoanLine], flags_width: int | None) -> Table:
    """The loans table; with ``flags_width`` a flags column that wide, else none."""
    table = Table(
        title="Loans, most urgent first", title_justify="left", box=box.SIMPLE_HEAD, padding=(0, 1)
    )
    table.add_column("loan", no_wrap=True)
    for heading in ("specimens", "mass drilled", "due"):  # wrapped only on a narrow terminal
        table.add_column(heading, overflow="fold")
    if flags_width is not None:
        table.add_column("flags", max_width=flags_width)
    for line in lines:
        due = (
            f"{line.due_on.isoformat()}\n{days_left(line.days_left)}"
            if line.status == "open"
            else line.status
        )
        sampled = sampled_of(line.sampled, line.specimens, line.max_specimens_sampled)
        cells: list[RenderableType] = [
            Text.assemble(visible(line.reference), "\n", (f"{line.lender_code} {line.id}", "dim")),
            f"{sampled}\n{line.on_hand}/{line.specimens} on hand",
            Text.assemble(
                precision.used_of_limit(line.drilled_mg, line.max_total_mass_mg),
                "\n",
                usage_bar(line.used_fraction, BAR_WIDTH),
            ),
            due,
        ]
        if flags_width is not None:
            cells.append(flag_cell(line.flags, flags_width))
        table.add_row(*cells)
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
