"""Overview: open loans, most urgent first — allowance used, due date, flags. Enter opens one.

``a`` shows all loans, returned and closed ones after the open; ``a`` again, the open ones.
At start-up it may be drawn before the database is open: it then says it is reading the
open loans, and fills when the services have read them.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import ClassVar

from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.message import Message
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Static

from tracker.domain import precision
from tracker.domain.errors import TrackerError
from tracker.present.bars import usage_bar
from tracker.present.loans import sampled_of
from tracker.services.read.loan_lines import LoanLine
from tracker.ui.context import database, tracker_app
from tracker.ui.messages import Refused, refusal_text
from tracker.ui.plain import shown
from tracker.ui.widgets import flagged_rows
from tracker.ui.widgets.flagged_rows import FlaggedRow
from tracker.ui.widgets.operator_bar import OperatorBar

COLUMNS = ("Loan", "Allowance used", "Due", "Specimens")


class OverviewScreen(Screen[None]):
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("enter", "open_loan", "Open loan", id="overview.open"),
        Binding("r", "refresh", "Refresh", id="overview.refresh"),
        Binding("a", "toggle_all", "All loans", id="overview.all"),
    ]

    def __init__(self) -> None:
        super().__init__()
        self.every_loan = False  # the open loans only, until asked for every loan
        self.shown_lines: tuple[Sequence[LoanLine], dict[str, int]] = ((), {})

    class Loaded(Message):
        def __init__(self, lines: list[LoanLine], missing: dict[str, int]) -> None:
            super().__init__()
            self.lines, self.missing = lines, missing

    def compose(self) -> ComposeResult:
        yield OperatorBar("Open loans · most urgent first")
        table: DataTable[Text | str] = DataTable(id="loans", cursor_type="row", zebra_stripes=True)
        yield table
        yield Static("", id="loan-hint", classes="hint")
        yield Footer(compact=True)

    def on_mount(self) -> None:
        flagged_rows.fill(self.query_one("#loans", DataTable), COLUMNS, [], self.size.width)
        if tracker_app(self).db is None:
            self.query_one("#loan-hint", Static).update("reading the open loans …")
        self.action_refresh()

    def on_screen_resume(self) -> None:
        if self.query_one("#loans", DataTable).row_count:
            self.action_refresh()

    def action_refresh(self) -> None:
        if tracker_app(self).db is not None:  # else the app refreshes it once it is open
            self.load(self.every_loan)

    def action_toggle_all(self) -> None:
        self.every_loan = not self.every_loan
        title = "All loans · open first" if self.every_loan else "Open loans · most urgent first"
        self.query_one(OperatorBar).show_title(title)
        self.action_refresh()

    @work(thread=True, exclusive=True, group="load")
    def load(self, every_loan: bool) -> None:
        from tracker.services.read import browse, reconcile

        try:
            db = database(self)
            lines = reconcile.reconcile(db, specimens=False, open_only=not every_loan)
            missing = browse.results_missing_counts(db, open_only=not every_loan)
        except TrackerError as error:
            self.post_message(Refused(error, "load"))
            return
        self.post_message(self.Loaded(lines, missing))

    def on_overview_screen_loaded(self, event: Loaded) -> None:
        self.shown_lines = (event.lines, event.missing)
        self._show(event.lines, event.missing)

    def on_resize(self) -> None:
        if self.shown_lines[0]:  # the flags' width follows the terminal's
            self._show(*self.shown_lines)

    def _show(self, lines: Sequence[LoanLine], missing: dict[str, int]) -> None:
        table = self.query_one("#loans", DataTable)
        keep = table.cursor_row
        rows = [FlaggedRow(line.id, _cells(line), _flags(line, missing)) for line in lines]
        flagged_rows.fill(table, COLUMNS, rows, self.size.width, least_height=2)
        if table.row_count:
            table.move_cursor(row=min(keep, table.row_count - 1))
        which = "loans · a: open loans only" if self.every_loan else "open loans · a: all loans"
        self.query_one("#loan-hint", Static).update(
            f"{len(lines)} {which} · Enter opens a loan · scan any label to jump to it"
        )

    def on_refused(self, event: Refused) -> None:
        self.query_one("#loan-hint", Static).update(refusal_text(event.error))

    @on(DataTable.RowSelected, "#loans")
    def _selected(self, event: DataTable.RowSelected) -> None:
        if event.row_key.value:
            tracker_app(self).open_id(event.row_key.value)

    def action_open_loan(self) -> None:
        table = self.query_one("#loans", DataTable)
        if table.row_count:
            key = table.coordinate_to_cell_key(table.cursor_coordinate).row_key.value
            if key:
                tracker_app(self).open_id(key)


def _cells(line: LoanLine) -> tuple[Text | str, ...]:
    """A loan's reference and lender, allowance used, due date and specimens, two lines each."""
    due = (
        f"{line.due_on}\n{line.days_left} d left"
        if line.status == "open"
        else f"{line.due_on}\n{line.status}"
    )
    return (
        shown(f"{line.reference}\n{line.lender_code}", style="bold"),
        Text.assemble(
            precision.used_of_limit(line.drilled_mg, line.max_total_mass_mg),
            "\n",
            usage_bar(line.used_fraction, 8),
        ),
        due,
        f"{sampled_of(line.sampled, line.specimens)}\n{line.on_hand} on hand",
    )


def _flags(line: LoanLine, missing: dict[str, int]) -> list[str]:
    """The loan's flags, and how many of its drilled specimens still have no result."""
    flags = list(line.flags)
    if line.status == "open" and missing.get(line.id):
        flags.append(f"results missing: {missing[line.id]}")
    return flags
