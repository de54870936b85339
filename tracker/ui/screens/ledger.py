"""The custody ledger: browse and filter events, verify the chain and audit the books
against it with a progress bar, and show the head hash a lender can check independently."""

from __future__ import annotations

import json
from pathlib import Path
from typing import ClassVar

from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal
from textual.message import Message
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Input, ProgressBar, Static

from tracker.domain.errors import TrackerError
from tracker.domain.ledger import VerifyReport
from tracker.services.core.views import EventView
from tracker.services.ledger import audit, chain, checkpoints
from tracker.services.ledger.audit import AuditReport
from tracker.services.read import lineage
from tracker.ui.context import database, operator, tracker_app
from tracker.ui.messages import Refused, refusal_text
from tracker.ui.plain import shown
from tracker.ui.widgets import event_rows
from tracker.ui.widgets.event_rows import named
from tracker.ui.widgets.operator_bar import OperatorBar

LIMIT = 500


class LedgerScreen(Screen[None]):
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("v", "verify", "Verify chain", id="ledger.verify"),
        Binding("a", "audit", "Audit books", id="ledger.audit"),
        Binding("slash", "filter", "Filter", id="ledger.filter"),
        Binding("e", "export", "Export", id="ledger.export"),
        Binding("h", "anchor", "Anchor head", id="ledger.anchor"),
        Binding("escape", "app.previous", "Back", id="ledger.back"),
    ]

    class Listed(Message):
        def __init__(self, events: list[EventView], names: dict[str, str]) -> None:
            super().__init__()
            self.events, self.names = events, names

    class Progress(Message):
        def __init__(self, done: int, total: int) -> None:
            super().__init__()
            self.done, self.total = done, total

    class Verified(Message):
        def __init__(self, report: VerifyReport) -> None:
            super().__init__()
            self.report = report

    class Written(Message):
        def __init__(self, said: str) -> None:
            super().__init__()
            self.said = said

    class Audited(Message):
        def __init__(self, report: AuditReport) -> None:
            super().__init__()
            self.report = report

    def compose(self) -> ComposeResult:
        yield OperatorBar("Custody ledger")
        with Horizontal(id="ledger-filters"):
            yield Input(placeholder="action starts with…", id="filter-action")
            yield Input(placeholder="operator", id="filter-operator")
            yield Input(placeholder="item ID", id="filter-item")
        yield DataTable(id="events", cursor_type="row", zebra_stripes=True)
        yield Static("", id="event-payload")
        yield ProgressBar(total=None, id="verify-progress", show_eta=False)
        yield Static(
            "press v to verify the whole chain, a to audit the books against it",
            id="verify-result",
        )
        yield Footer(compact=True)

    def on_mount(self) -> None:
        self.listed = LedgerScreen.Listed([], {})  # the events shown, and their items' names
        self.load("", "", "")
        self.query_one("#events", DataTable).focus()

    def on_resize(self) -> None:
        """The action column takes the width the terminal leaves it."""
        if self.listed.events:
            self.on_ledger_screen_listed(self.listed)

    def action_filter(self) -> None:
        self.query_one("#filter-action", Input).focus()

    @on(Input.Submitted)
    @on(Input.Changed)
    def _filters(self) -> None:
        self.load(
            *(
                self.query_one(f"#filter-{n}", Input).value.strip()
                for n in ("action", "operator", "item")
            )
        )

    @work(thread=True, exclusive=True, group="load")
    def load(self, action: str, who: str, item: str) -> None:
        try:
            db = database(self)
            events = chain.recent_events(
                db, LIMIT, action or None, operator=who or None, item=item or None
            )
            names = lineage.names_of(db, {r for e in events for r in (e.object, e.parent) if r})
        except TrackerError as error:
            self.post_message(Refused(error, "load"))
            return
        self.post_message(self.Listed(events, names))

    def on_ledger_screen_listed(self, event: Listed) -> None:
        self.listed = event
        table = self.query_one("#events", DataTable)
        keep = table.cursor_row
        event_rows.fill(table, event.events, event.names, self.size.width)
        if table.row_count:
            table.move_cursor(row=min(keep, table.row_count - 1))

    @on(DataTable.RowHighlighted, "#events")
    def _show_payload(self, event: DataTable.RowHighlighted) -> None:
        key = str(event.row_key.value)
        chosen = next((e for e in self.listed.events if str(e.seq) == key), None)
        if chosen is not None:
            payload = json.dumps(chosen.payload, ensure_ascii=False)[:300]
            where = f"{chosen.os_user}@{chosen.host}" + (
                f" as {chosen.db_user}" if chosen.db_user else ""
            )
            signed = (
                f"signed with key {chosen.key_id} · from {where}"
                if chosen.key_id
                else "unsigned (recorded before signing)"
            )
            rows = (
                "states the facts of the rows it wrote"
                if chosen.states_facts
                else "states no row facts (recorded before they were kept)"
            )
            about = named(chosen.object, self.listed.names) if chosen.object else "the lab"
            if chosen.parent:
                about += f" · from {named(chosen.parent, self.listed.names)}"
            self.query_one("#event-payload", Static).update(
                shown(f"#{chosen.seq} {about} · {chosen.hash[:16]}… {signed} · {rows}\n{payload}")
            )

    def action_verify(self) -> None:
        self.query_one("#verify-result", Static).update("… verifying every event")
        self.verify()

    @work(thread=True, exclusive=True, group="verify")
    def verify(self) -> None:
        def progress(done: int, total: int) -> None:
            self.post_message(self.Progress(done, total))

        try:
            report = checkpoints.verify_and_keep(database(self), progress, every=50)
        except TrackerError as error:
            self.post_message(Refused(error, "verify"))
            return
        self.post_message(self.Verified(report))

    def action_audit(self) -> None:
        self.query_one("#verify-result", Static).update("… replaying every event, then every row")
        self.audit()

    @work(thread=True, exclusive=True, group="verify")
    def audit(self) -> None:
        def progress(done: int, total: int) -> None:
            self.post_message(self.Progress(done, total))

        try:
            report = audit.audit(database(self), progress, every=50)
        except TrackerError as error:
            self.post_message(Refused(error, "audit"))
            return
        self.post_message(self.Audited(report))

    def on_ledger_screen_audited(self, event: Audited) -> None:
        r = event.report
        lines = [("✓ " if r.ok else "✗ ") + r.verdict()]
        statement = r.coverage.statement()
        if statement is not None:
            lines.append(f"not checked: {statement}")
        result = self.query_one("#verify-result", Static)
        result.update(shown("\n".join(lines), style="green" if r.ok else "bold red"))
        result.set_class(not r.ok, "-error")

    def on_ledger_screen_progress(self, event: Progress) -> None:
        self.query_one("#verify-progress", ProgressBar).update(
            total=max(event.total, 1), progress=event.done
        )

    def on_ledger_screen_verified(self, event: Verified) -> None:
        r = event.report
        result = self.query_one("#verify-result", Static)
        if r.ok:
            signed = f"{r.signed} signed, every signature valid"
            if r.unsigned:
                signed += f" · {r.unsigned} unsigned (recorded before signing)"
            line = (
                f"✓ ledger intact: {r.events} events · {signed} · head #{r.head_seq} {r.head_hash}"
            )
        else:
            line = (
                f"✗ ledger BROKEN at event #{r.broken_seq}: {r.reason} "
                f"({r.events} events verified before it)"
            )
        result.update(shown(line, style="green" if r.ok else "bold red"))
        result.set_class(not r.ok, "-error")

    def action_export(self) -> None:
        """The whole ledger as JSON Lines in a new file in the output folder."""
        self.query_one("#verify-result", Static).update("… exporting the ledger")
        self.export_ledger(self._new_file("ledger", "jsonl"))

    @work(thread=True, exclusive=True, group="verify")
    def export_ledger(self, path: Path) -> None:
        try:
            count, _ = chain.export_file(database(self), path)
        except TrackerError as error:
            self.post_message(Refused(error, "export"))
            return
        self.post_message(self.Written(f"✓ exported {count} events to {path}"))

    def action_anchor(self) -> None:
        """The ledger's head, signed, in a new file to keep outside the database."""
        self.query_one("#verify-result", Static).update("… writing the anchor")
        self.write_anchor(self._new_file("ledger-anchor", "json"))

    @work(thread=True, exclusive=True, group="verify")
    def write_anchor(self, path: Path) -> None:
        try:
            kept = chain.write_anchor(database(self), operator(self), path).anchor
        except TrackerError as error:
            self.post_message(Refused(error, "anchor"))
            return
        self.post_message(self.Written(f"✓ anchor of event #{kept.seq} written to {path}"))

    def _new_file(self, stem: str, suffix: str) -> Path:
        """A file in the output folder named after the moment (never an existing one:
        writing refuses to replace a file)."""
        app = tracker_app(self)
        return app.out_dir / f"{stem}-{app.clock():%Y%m%dT%H%M%SZ}.{suffix}"

    def on_ledger_screen_written(self, event: Written) -> None:
        self.query_one("#verify-result", Static).update(shown(event.said))

    def on_refused(self, event: Refused) -> None:
        self.query_one("#verify-result", Static).update(refusal_text(event.error))
