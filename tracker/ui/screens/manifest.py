"""A lender's specimen list (manifest) for one loan: previewed row by row, then imported.

Enter on the file path shows what the import would do to each row — create, update (with
the changes), unchanged, or the row's problems — and writes nothing. Ctrl+S imports the
same file in one transaction; the service refuses a file with any problem, so a half-read
list never reaches the database.
"""

from __future__ import annotations

from typing import Any, ClassVar

from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.message import Message
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Input, Static

from tracker.db.uploads import read_typed_path
from tracker.domain.errors import TrackerError
from tracker.services.loans import manifests
from tracker.services.loans.manifests import ManifestOutcome, ManifestPreview, RowResult
from tracker.ui.context import database, operator, tracker_app
from tracker.ui.messages import Refused, refusal_text
from tracker.ui.plain import shown
from tracker.ui.widgets.field_label import FieldLabel
from tracker.ui.widgets.operator_bar import OperatorBar
from tracker.ui.widgets.outcome import show_outcome

ACTIONS = {
    "create": ("✚ create", "green"),
    "update": ("✎ update", "yellow"),
    "unchanged": ("= unchanged", "dim"),
    "error": ("✗ problem", "bold red"),
}


class ManifestScreen(Screen[None]):
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("ctrl+s", "import_file", "Import", id="manifest.import", priority=True),
        Binding("escape", "app.previous", "Back", id="manifest.back"),
    ]

    class Previewed(Message):
        def __init__(self, preview: ManifestPreview) -> None:
            super().__init__()
            self.preview = preview

    class Imported(Message):
        def __init__(self, outcome: ManifestOutcome) -> None:
            super().__init__()
            self.outcome = outcome

    def __init__(self, loan: str) -> None:
        super().__init__()
        self.loan = loan
        self.preview_view: ManifestPreview | None = None

    def compose(self) -> ComposeResult:
        yield OperatorBar(f"Manifest for {self.loan}")
        yield Static(
            "The lender's specimen list as CSV, TSV or XLSX with Darwin Core headings (or a "
            "saved mapping). Enter previews every row; Ctrl+S imports the whole file.",
            classes="intro",
        )
        yield FieldLabel("File (path)", "e.g. ~/loans/specimen-list.csv")
        yield Input(id="f-file", classes="field")
        yield FieldLabel("Saved mapping (optional)", "empty: Darwin Core headings")
        yield Input(id="f-mapping", classes="field")
        yield Static("", id="manifest-summary")
        yield DataTable(id="manifest-rows", cursor_type="row", zebra_stripes=True)
        yield Static("", id="outcome")
        yield Footer(compact=True)

    def on_mount(self) -> None:
        table = self.query_one("#manifest-rows", DataTable)
        for label, width in (("Row", 4), ("catalogNumber", 16), ("Action", 12), ("Detail", None)):
            table.add_column(label, width=width)
        self.query_one("#f-file", Input).focus()

    def request(self) -> dict[str, Any]:
        """What was typed: the path is read by the worker, never on the UI thread."""
        mapping = self.query_one("#f-mapping", Input).value.strip()
        path = self.query_one("#f-file", Input).value.strip()
        return {"loan": self.loan, "path": path, "mapping": mapping or None}

    @on(Input.Submitted)
    def _submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.show_outcome("… reading the file", error=False)
        self.preview(self.request())

    @work(thread=True, exclusive=True, group="manifest")
    def preview(self, request: dict[str, Any]) -> None:
        try:
            answer = manifests.preview_manifest(database(self), _with_file(request))
        except TrackerError as error:
            self.post_message(Refused(error, "preview"))
            return
        self.post_message(self.Previewed(answer))

    def action_import_file(self) -> None:
        self.show_outcome("… importing", error=False)
        self.import_file(self.request())

    @work(thread=True, exclusive=True, group="manifest")
    def import_file(self, request: dict[str, Any]) -> None:
        try:
            outcome = manifests.import_manifest(database(self), operator(self), _with_file(request))
        except TrackerError as error:
            self.post_message(Refused(error, "import"))
            return
        self.post_message(self.Imported(outcome))

    def on_manifest_screen_previewed(self, event: Previewed) -> None:
        self.show_preview(event.preview)
        word = "ready to import" if event.preview.clean else "fix the file, then preview again"
        self.show_outcome(f"previewed: nothing written · {word}", error=not event.preview.clean)

    def on_manifest_screen_imported(self, event: Imported) -> None:
        outcome = event.outcome
        self.show_preview(outcome.preview)
        if outcome.event_seq is None:
            self.show_outcome("✓ nothing to change: every row is already in the loan", error=False)
            return
        self.show_outcome(
            f"✓ imported: {len(outcome.created)} created, {len(outcome.updated)} updated"
            f" · ledger event #{outcome.event_seq}",
            error=False,
        )
        tracker_app(self).tell(f"✓ manifest imported into {self.loan}", title="Manifest")

    def show_preview(self, preview: ManifestPreview) -> None:
        self.preview_view = preview
        self.query_one("#manifest-summary", Static).update(_summary(preview))
        table = self.query_one("#manifest-rows", DataTable)
        table.clear()
        for row in preview.rows:
            label, style = ACTIONS[row.action]
            table.add_row(
                str(row.row),
                shown(row.catalog_number or "—"),
                Text(label, style=style),
                shown(_detail(row)),
                key=str(row.row),
            )

    def on_refused(self, event: Refused) -> None:
        event.stop()
        self.show_outcome(refusal_text(event.error), error=True)

    def show_outcome(self, text: str | Text, *, error: bool) -> None:
        show_outcome(self.query_one("#outcome", Static), text, error=error)


def _with_file(request: dict[str, Any]) -> dict[str, Any]:
    """The service's request: the file's name and bytes instead of its path."""
    typed = dict(request)
    text = str(typed.pop("path"))
    return typed | read_typed_path(text, "file", "type the path of the lender's list")


def _summary(preview: ManifestPreview) -> Text:
    text = Text()
    text.append(f"{preview.file}: ", style="bold")
    text.append(f"{preview.create} to create, {preview.update} to update, ")
    text.append(f"{preview.unchanged} unchanged, ")
    text.append(f"{preview.problems} problem(s)", style="bold red" if preview.problems else "")
    if preview.kept_as_extra:
        text.append(
            f"\nkept as extra terms (stored, not dropped): {', '.join(preview.kept_as_extra)}"
        )
    if preview.not_imported:
        text.append(f"\nnot imported (archive extensions): {', '.join(preview.not_imported)}")
    return text


def _detail(row: RowResult) -> str:
    return row.detail()
