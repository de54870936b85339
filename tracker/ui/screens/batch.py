"""Column batch builder: scan aliquots onto columns, add blanks and reference materials,
enter recoveries, and see yields and blank fractions flagged (in words and symbols)."""

from __future__ import annotations

from typing import Any, ClassVar

from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.message import Message
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Input, Static

from tracker.domain import precision
from tracker.domain.errors import TrackerError
from tracker.present import lab
from tracker.present.bars import flag_text
from tracker.services.bench import chemistry, columns
from tracker.services.bench.columns import BatchSummary, PositionLine
from tracker.services.core.views import Done
from tracker.services.read import browse
from tracker.services.read.browse import BatchLine
from tracker.ui.context import database, operator, tracker_app
from tracker.ui.messages import Refused, refusal_text
from tracker.ui.plain import shown
from tracker.ui.screens.batch_forms import (
    CutScreen,
    NewBatchScreen,
    ReferencePositionScreen,
    RemovePositionScreen,
)
from tracker.ui.widgets import flagged_rows
from tracker.ui.widgets.flagged_rows import FlaggedRow
from tracker.ui.widgets.id_field import IdField
from tracker.ui.widgets.operator_bar import OperatorBar


class BatchScreen(Screen[None]):
    BINDINGS: ClassVar[list[BindingType]] = [
        # Ctrl keys: the scan field keeps the focus between scans, so plain letters would type.
        Binding("ctrl+n", "new_batch", "New batch", id="batch.new", priority=True),
        Binding("ctrl+b", "add_blank", "Blank", id="batch.blank", priority=True),
        Binding("ctrl+r", "add_reference", "Ref. material", id="batch.reference", priority=True),
        Binding("ctrl+e", "enter_cut", "Recovery", id="batch.cut", priority=True),
        Binding("ctrl+d", "remove_position", "Remove column", id="batch.remove", priority=True),
        Binding("ctrl+t", "other_batch", "Other batch", id="batch.other", priority=True),
        Binding("escape", "app.previous", "Back", id="batch.back"),
    ]

    class Listed(Message):
        def __init__(self, batches: list[BatchLine]) -> None:
            super().__init__()
            self.batches = batches

    class Loaded(Message):
        def __init__(self, summary: BatchSummary) -> None:
            super().__init__()
            self.summary = summary

    class Added(Message):
        def __init__(self, done: Done[Any]) -> None:
            super().__init__()
            self.done = done

    def __init__(self, batch: str | None) -> None:
        super().__init__()
        self.batch_id = batch
        self.summary: BatchSummary | None = None

    def compose(self) -> ComposeResult:
        yield OperatorBar("Column batch")
        yield Static("", id="batch-head")
        yield IdField(
            "Scan an aliquot to put it on the next column",
            name="aliquot",
            hint="scan an aliquot AQ- (Enter adds it)",
        )
        yield DataTable(id="batches", cursor_type="row", zebra_stripes=True)
        yield DataTable(id="positions", cursor_type="row", zebra_stripes=True)
        yield Static("", id="outcome")
        yield Footer(compact=True)

    def on_mount(self) -> None:
        batches = self.query_one("#batches", DataTable)
        for label in ("Batch", "Name", "Element", "Date", "Columns"):
            batches.add_column(label)
        self.refresh_view()

    def on_screen_resume(self) -> None:
        self.refresh_view()

    def refresh_view(self) -> None:
        showing = self.batch_id is not None
        self.query_one("#batches").display = not showing
        self.query_one("#positions").display = showing
        self.query_one("#field-aliquot").display = showing
        if showing:
            assert self.batch_id is not None
            self.load(self.batch_id)
        else:
            self.query_one("#batch-head", Static).update(
                "Choose a batch (Enter) or open a new one (Ctrl+N)."
            )
            self.list_batches()

    @work(thread=True, exclusive=True, group="load")
    def list_batches(self) -> None:
        self.post_message(self.Listed(browse.list_batches(database(self))))

    @work(thread=True, exclusive=True, group="load")
    def load(self, batch: str) -> None:
        try:
            summary = columns.summarize_batch(database(self), batch)
        except TrackerError as error:
            self.post_message(Refused(error, "load"))
            return
        self.post_message(self.Loaded(summary))

    def on_batch_screen_listed(self, event: Listed) -> None:
        table = self.query_one("#batches", DataTable)
        table.clear()
        for b in event.batches:
            table.add_row(
                b.id, shown(b.name), b.element, str(b.performed_on), str(b.positions), key=b.id
            )
        table.focus()

    @on(DataTable.RowSelected, "#batches")
    def _chosen(self, event: DataTable.RowSelected) -> None:
        if event.row_key.value:
            self.batch_id = str(event.row_key.value)
            self.refresh_view()

    def on_batch_screen_loaded(self, event: Loaded) -> None:
        s = self.summary = event.summary
        self.batch_id = s.id
        head = Text()
        head.append(shown(f"{s.id} {s.name} · {s.element}", style="bold"))
        head.append(f"\n{lab.limits_text(s)} · ")
        head.append_text(flag_text(s.flags))
        if s.removed:
            head.append("\n")
            head.append_text(lab.removed_text(s.removed))
        self.query_one("#batch-head", Static).update(head)
        table = self.query_one("#positions", DataTable)
        keep = table.cursor_row
        self.fill_positions()
        if table.row_count:
            table.move_cursor(row=min(keep, table.row_count - 1))
        self.query_one("#f-aliquot", Input).focus()

    def on_resize(self) -> None:
        self.fill_positions()

    def fill_positions(self) -> None:
        """The columns, two lines each so the flags keep their room at 80 columns."""
        if self.summary is None:
            return
        rows = [FlaggedRow(p.id, _position_cells(p), p.flags) for p in self.summary.positions]
        table = self.query_one("#positions", DataTable)
        flagged_rows.fill(table, POSITION_COLUMNS, rows, self.size.width, least_height=2)

    # ------------------------------------------------------------------ building
    def on_id_field_scanned(self, event: IdField.Scanned) -> None:
        event.stop()
        self._add({"kind": "sample", "aliquot": event.text})

    @on(Input.Submitted, "#f-aliquot")
    def _typed_aliquot(self, event: Input.Submitted) -> None:
        if event.value.strip():
            self._add({"kind": "sample", "aliquot": event.value.strip()})

    def action_add_blank(self) -> None:
        self._add({"kind": "blank"})

    def _add(self, request: dict[str, Any]) -> None:
        if self.batch_id is None:
            self._outcome("✗ choose or open a batch first", error=True)
            return
        self._outcome("… adding", error=False)
        self.add_position({"batch": self.batch_id, **request})

    @work(thread=True, exclusive=True, group="save")
    def add_position(self, request: dict[str, Any]) -> None:
        try:
            done = chemistry.add_position(database(self), operator(self), request)
        except TrackerError as error:
            self.post_message(Refused(error, "add"))
            return
        self.post_message(self.Added(done))

    def on_batch_screen_added(self, event: Added) -> None:
        p = event.done.item
        loaded = f" · loaded {precision.micrograms(p.loaded_ug)}" if p.loaded_ug else ""
        holds = lab.holds_text(p.holds, p.catalog_number)
        self._outcome(
            f"✓ column {p.slot} ({p.id}): {p.kind} {holds}{loaded} · label "
            f"queued · event #{event.done.event_seq}",
            error=False,
        )
        self.query_one("#f-aliquot", Input).value = ""
        if self.batch_id:
            self.load(self.batch_id)

    def on_refused(self, event: Refused) -> None:
        self._outcome(refusal_text(event.error), error=True)

    def _outcome(self, text: str | Text, *, error: bool) -> None:
        outcome = self.query_one("#outcome", Static)
        outcome.update(text if isinstance(text, Text) else shown(text))
        outcome.set_class(error, "-error")

    # ------------------------------------------------------------------ other forms
    def action_new_batch(self) -> None:
        self.app.push_screen(NewBatchScreen())

    def action_add_reference(self) -> None:
        if self.batch_id:
            self.app.push_screen(ReferencePositionScreen(batch=self.batch_id))

    def action_enter_cut(self) -> None:
        key = self._highlighted()
        if self.summary is not None and key is not None:
            self.app.push_screen(CutScreen(position=key, cut=self.summary.element))

    def action_remove_position(self) -> None:
        """The highlighted column, scanned by mistake: the form asks for the reason, then
        for confirmation."""
        key = self._highlighted()
        if key is None:
            self._outcome("✗ highlight the column to remove first", error=True)
            return
        self.app.push_screen(RemovePositionScreen(position=key))

    def _highlighted(self) -> str | None:
        """The ID of the column the cursor is on, if the batch shows any."""
        table = self.query_one("#positions", DataTable)
        if self.summary is None or not table.row_count:
            return None
        key = table.coordinate_to_cell_key(table.cursor_coordinate).row_key.value
        return str(key) if key else None

    def action_other_batch(self) -> None:
        self.batch_id = None
        self.refresh_view()

    @on(DataTable.RowSelected, "#positions")
    def _open_position(self, event: DataTable.RowSelected) -> None:
        if event.row_key.value:
            tracker_app(self).push_screen(
                CutScreen(position=str(event.row_key.value), cut=self.summary.element)
                if self.summary
                else CutScreen()
            )


POSITION_COLUMNS = ("Column", "Holds", "Loaded/recov.", "Yield/blank")


def _position_cells(p: PositionLine) -> tuple[Text | str, ...]:
    """A column: slot, ID and kind; the specimen (or material) and aliquot it holds; the
    element loaded and recovered; its yield and the procedural blank's share."""
    loaded, recovered, yield_text, share = lab.position_cells(p)
    holds = f"{p.catalog_number}\n{p.holds}" if p.catalog_number else (p.holds or "—")
    return (
        Text.assemble(f"{p.slot}. {p.id}\n", (p.kind, "dim")),
        shown(holds),
        f"{loaded} →\n{recovered}",
        f"{yield_text}\n{share}",
    )
