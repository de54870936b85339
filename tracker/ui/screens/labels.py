"""Labels: the queue, a stock's sheet drawn in the terminal, and printing to PDF (and lp)."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, ClassVar

from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal
from textual.message import Message
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Input, Select, Static, TabbedContent, TabPane

from tracker.domain.errors import InputError, TrackerError
from tracker.services.core.views import Done
from tracker.services.labels import handling
from tracker.services.labels.handling import LabelView
from tracker.ui.context import database, operator, tracker_app
from tracker.ui.messages import Refused, refusal_text
from tracker.ui.plain import shown
from tracker.ui.screens.confirm import ConfirmScreen
from tracker.ui.screens.tabs import TabKeys, tab_keys
from tracker.ui.widgets.id_field import IdField
from tracker.ui.widgets.operator_bar import OperatorBar

if TYPE_CHECKING:  # the label drawing libraries load when a sheet is drawn or printed
    from tracker.output.jobs import PrintOutcome

DEFAULT_STOCK = "a4-65"


class LabelsScreen(TabKeys, Screen[None]):
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("space", "choose", "Choose", id="labels.choose"),
        Binding("p", "print_queue", "Print", id="labels.print"),
        Binding("x", "cancel_labels", "Cancel labels", id="labels.cancel"),
        Binding("R", "reprint", "Reprint", id="labels.reprint"),
        Binding("v", "preview", "Preview sheet", id="labels.preview"),
        Binding("r", "refresh", "Refresh", id="labels.refresh"),
        Binding("escape", "app.previous", "Back", id="labels.back"),
        *tab_keys(("tab-queue", "Queue"), ("tab-sheet", "Sheet")),
    ]

    class Loaded(Message):
        def __init__(self, queue: list[LabelView], stocks: list[str], seq: int) -> None:
            super().__init__()
            self.queue, self.stocks, self.seq = queue, stocks, seq

    class Previewed(Message):
        def __init__(self, sheet: Text) -> None:
            super().__init__()
            self.sheet = sheet

    class Printed(Message):
        def __init__(self, outcome: Any) -> None:
            super().__init__()
            self.outcome = outcome

    class Queued(Message):
        def __init__(self, done: Done[Any]) -> None:
            super().__init__()
            self.done = done

    def __init__(self) -> None:
        super().__init__()
        self.chosen: list[str] = []  # items whose queued labels are picked, in queue order
        self.loads = 0  # reads of the queue started; only the newest one's answer is shown

    def compose(self) -> ComposeResult:
        yield OperatorBar("Labels")
        with Horizontal(id="label-options"):
            yield Select(
                [(DEFAULT_STOCK, DEFAULT_STOCK)], value=DEFAULT_STOCK, id="stock", allow_blank=False
            )
            yield Input("1", id="start", placeholder="start position")
            yield Input("", id="printer", placeholder="printer (empty: PDF only)")
        yield IdField(
            "Scan an item to queue its label",
            name="queue-item",
            hint="scan any vial or specimen",
        )
        with TabbedContent(id="label-tabs"):
            with TabPane("Queue", id="tab-queue"):
                yield DataTable(id="queue", cursor_type="row", zebra_stripes=True)
            with TabPane("Sheet preview", id="tab-sheet"):
                yield Static("press v to draw the sheet", id="sheet")
        yield Static("", id="label-hint", classes="hint")
        yield Static("", id="outcome")
        yield Footer(compact=True)

    def on_mount(self) -> None:
        table = self.query_one("#queue", DataTable)
        table.add_column("✓", key="chosen")
        for label in ("Item", "Kind", "Label text", "Queued by"):
            table.add_column(label)
        self.action_refresh()

    def action_refresh(self) -> None:
        self.load()

    def on_screen_resume(self) -> None:
        self.load()  # back from a form (labels cancelled): the queue as it is now

    def load(self) -> None:
        """Read the queue again. Reads may overlap (back from a question while a print
        finishes): only the newest one's answer is shown, never an older queue after it."""
        self.loads += 1
        self._read_queue(self.loads)

    @work(thread=True, exclusive=True, group="load")
    def _read_queue(self, seq: int) -> None:
        from tracker.output.stocks import entries

        try:
            queue = handling.list_labels(database(self))
            stocks = sorted(entries())
        except TrackerError as error:
            self.post_message(Refused(error, "load"))
            return
        self.post_message(self.Loaded(queue, stocks, seq))

    def on_labels_screen_loaded(self, event: Loaded) -> None:
        if event.seq != self.loads:
            return  # an older read, overtaken by a newer one
        select: Select[str] = self.query_one("#stock", Select)
        current = select.value
        select.set_options([(name, name) for name in event.stocks])
        select.value = current if current in event.stocks else event.stocks[0]
        table = self.query_one("#queue", DataTable)
        table.clear()
        queued = [label.item for label in event.queue]
        self.chosen = [item for item in self.chosen if item in queued]
        for label in event.queue:
            table.add_row(
                "✓" if label.item in self.chosen else "",
                label.item,
                label.kind,
                shown(" / ".join(label.lines[:2])),
                shown(label.queued_by),
                key=label.item,
            )
        self.query_one("#label-hint", Static).update(
            f"{len(event.queue)} label(s) queued · space chooses some · p prints the chosen "
            "(or all) · R reprints · x cancels · v draws the sheet"
        )

    def action_choose(self) -> None:
        """Pick or unpick the highlighted label for the next print (or cancel)."""
        table = self.query_one("#queue", DataTable)
        if not table.row_count:
            return
        item = str(table.coordinate_to_cell_key(table.cursor_coordinate).row_key.value)
        if item in self.chosen:
            self.chosen.remove(item)
        else:
            self.chosen.append(item)
        table.update_cell(item, "chosen", "✓" if item in self.chosen else "")
        table.move_cursor(row=min(table.cursor_row + 1, table.row_count - 1))

    def picked(self) -> list[str]:
        """The chosen labels' items, or else the highlighted one's (none in an empty queue)."""
        table = self.query_one("#queue", DataTable)
        if self.chosen or not table.row_count:
            return list(self.chosen)
        return [str(table.coordinate_to_cell_key(table.cursor_coordinate).row_key.value)]

    def prefill(self, form: str) -> dict[str, str]:
        """What a form opened here takes (a key or the palette): the chosen labels (or the
        highlighted one) and, to reprint them, this screen's stock, start and printer."""
        items = {"items": ", ".join(self.picked())}
        if form == "labels_cancel":
            return items
        if form == "labels_reprint":
            stock, start, printer = self._options()
            return items | {"stock": stock, "start": start, "printer": printer}
        return {}

    def action_cancel_labels(self) -> None:
        tracker_app(self).action_bench("labels_cancel", **self.prefill("labels_cancel"))

    def action_reprint(self) -> None:
        """The reprint form, filled in from this screen; it asks before printing."""
        tracker_app(self).action_bench("labels_reprint", **self.prefill("labels_reprint"))

    def _options(self) -> tuple[str, str, str]:
        stock = str(self.query_one("#stock", Select).value)
        return (
            stock,
            self.query_one("#start", Input).value.strip() or "1",
            self.query_one("#printer", Input).value.strip(),
        )

    def action_preview(self) -> None:
        stock, start, _ = self._options()
        self.query_one("#label-tabs", TabbedContent).active = "tab-sheet"
        self.preview(stock, start)

    @work(thread=True, exclusive=True, group="preview")
    def preview(self, stock_name: str, start_text: str) -> None:
        from tracker.output.layout import lay_out
        from tracker.output.stocks import load_stock
        from tracker.ui.widgets.label_sheet import sheet_text

        try:
            start = start_position(start_text)
            stock = load_stock(stock_name)
            pages = lay_out(stock, handling.queued_facts(database(self)), start)
        except TrackerError as error:
            self.post_message(Refused(error, "preview"))
            return
        sheet = sheet_text(stock, pages[0] if pages else None, start)
        sheet.append(f"\n{len(pages)} page(s) for the queue")
        self.post_message(self.Previewed(sheet))

    def on_labels_screen_previewed(self, event: Previewed) -> None:
        self.query_one("#sheet", Static).update(event.sheet)

    def action_print_queue(self) -> None:
        """Print the chosen labels at once; the whole queue only after asking."""
        stock, start, printer = self._options()
        if self.chosen:
            self._outcome("… printing", error=False)
            self.print_queue(stock, start, printer, list(self.chosen))
            return
        queued = self.query_one("#queue", DataTable).row_count
        where = f"to the printer {printer}" if printer else "to a PDF"

        def answered(yes: bool | None) -> None:
            if yes:
                self._outcome("… printing", error=False)
                self.print_queue(stock, start, printer, None)

        tracker_app(self).push_screen(
            ConfirmScreen(
                f"Print all {queued} queued labels {where}?",
                f"on {stock}, from position {start}; printed labels leave the queue "
                "(space chooses some instead)",
            ),
            answered,
        )

    @work(thread=True, exclusive=True, group="save")
    def print_queue(self, stock: str, start: str, printer: str, items: list[str] | None) -> None:
        from tracker.output import jobs

        try:
            outcome = jobs.print_queue(
                database(self),
                operator(self),
                stock=stock,
                start=start_position(start),
                printer=printer or None,
                folder=tracker_app(self).out_dir,
                items=items,
            )
        except TrackerError as error:
            self.post_message(Refused(error, "print"))
            return
        self.post_message(self.Printed(outcome))

    def on_labels_screen_printed(self, event: Printed) -> None:
        self._outcome(printed_line(event.outcome), error=False)
        self.chosen = []
        self.load()

    @on(IdField.Scanned)
    def _scanned(self, event: IdField.Scanned) -> None:
        event.stop()
        self.queue_item(event.text)

    @on(Input.Submitted, "#f-queue-item")
    def _typed(self, event: Input.Submitted) -> None:
        if event.value.strip():
            self.queue_item(event.value.strip())

    @work(thread=True, exclusive=True, group="save")
    def queue_item(self, item: str) -> None:
        try:
            done = handling.queue_labels(database(self), operator(self), {"items": [item]})
        except TrackerError as error:
            self.post_message(Refused(error, "queue"))
            return
        self.post_message(self.Queued(done))

    def on_labels_screen_queued(self, event: Queued) -> None:
        self._outcome(
            f"✓ queued {', '.join(event.done.item.items)} · event #{event.done.event_seq}",
            error=False,
        )
        self.query_one("#f-queue-item", Input).value = ""
        self.load()

    def on_refused(self, event: Refused) -> None:
        self._outcome(refusal_text(event.error), error=True)

    def _outcome(self, text: str | Text, *, error: bool) -> None:
        outcome = self.query_one("#outcome", Static)
        outcome.update(text if isinstance(text, Text) else shown(text))
        outcome.set_class(error, "-error")


def start_position(text: str) -> int:
    """The first free position on the sheet, as typed (the stock says how far it may go)."""
    if not text.isdigit():
        raise InputError("start", text, "is not a whole number")
    return int(text)


def printed_line(outcome: PrintOutcome) -> str:
    """One line for a print or reprint job: labels, pages, the job, its new file, the event."""
    job = outcome.job
    sent = f" · sent to {job.printer}" if job.printer else ""
    done = "reprinted" if job.kind == "reprint" else "printed"
    return (
        f"✓ {done} {job.labels} label(s) on {job.pages} page(s) as {job.id} → "
        f"{outcome.out}{sent} · event #{outcome.event_seq}"
    )
