"""The return report for one loan: what the lender will read, then the file written.

The screen shows the report the service builds (totals, every specimen's account, flags,
the ledger head) before anything is written; Ctrl+S writes it in the chosen format to the
output folder through the same code as `tracker report return`, which records the report
event first and leaves no file if that is refused. The file is named after the loan and
its report event unless a name is typed; a typed name that exists is refused in words (the
screen never replaces a file), so the person types another.
"""

from __future__ import annotations

from pathlib import Path
from typing import ClassVar

from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal
from textual.message import Message
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Input, Select, Static

from tracker.db.outputs import TargetExists
from tracker.domain import precision
from tracker.domain.errors import InputError, TrackerError
from tracker.output import report_files
from tracker.output.report_files import WrittenReport
from tracker.present.bars import flag_text
from tracker.services.read import reports
from tracker.services.read.report_views import ReturnReport, SpecimenEntry
from tracker.ui.context import database, operator, tracker_app
from tracker.ui.messages import Refused, refusal_text
from tracker.ui.plain import shown
from tracker.ui.widgets import flagged_rows
from tracker.ui.widgets.flagged_rows import FlaggedRow
from tracker.ui.widgets.operator_bar import OperatorBar
from tracker.ui.widgets.outcome import show_outcome

FATES = (("destroyed", "destroyed"), ("retained", "retained"), ("consumed", "used up"))


REPORT_COLUMNS = ("Specimen", "Status", "Drilled · returned")


class ReportScreen(Screen[None]):
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("ctrl+s", "write", "Write report", id="report.write", priority=True),
        Binding("r", "reload", "Refresh", id="report.reload"),
        Binding("escape", "app.previous", "Back", id="report.back"),
    ]

    class Built(Message):
        def __init__(self, report: ReturnReport) -> None:
            super().__init__()
            self.report = report

    class Written(Message):
        def __init__(self, written: WrittenReport) -> None:
            super().__init__()
            self.written = written

    def __init__(self, loan: str) -> None:
        super().__init__()
        self.loan = loan
        self.flagged: list[FlaggedRow] = []  # the specimens' rows, refitted on a resize
        self.report: ReturnReport | None = None

    def compose(self) -> ComposeResult:
        yield OperatorBar(f"Return report {self.loan}")
        yield Static("building the report …", id="report-head")
        yield DataTable(id="report-specimens", cursor_type="row", zebra_stripes=True)
        yield Static("", id="report-totals")
        with Horizontal(id="report-write"):
            yield Static("Write as", classes="field-label")
            options = [(fmt.upper(), fmt) for fmt in report_files.FORMATS]
            yield Select(options, value="pdf", allow_blank=False, id="report-format")
            yield Static("File", classes="field-label")
            yield Input(
                "",
                id="report-file",
                placeholder="empty: named after the loan and the report's event number",
            )
        yield Static("", id="outcome")
        yield Footer(compact=True)

    def on_resize(self) -> None:
        """Fill the table; the flags take the width the terminal leaves them."""
        table = self.query_one("#report-specimens", DataTable)
        flagged_rows.fill(table, REPORT_COLUMNS, self.flagged, self.size.width)

    def on_mount(self) -> None:
        self.build()

    def action_reload(self) -> None:
        self.build()

    @work(thread=True, exclusive=True, group="build")
    def build(self) -> None:
        try:
            report = reports.build_return_report(database(self), self.loan)
        except TrackerError as error:
            self.post_message(Refused(error, "build"))
            return
        self.post_message(self.Built(report))

    def on_report_screen_built(self, event: Built) -> None:
        self.report = event.report
        title = f"Return report {event.report.loan['reference']}"
        self.query_one(".bar-title", Static).update(shown(title))
        self.query_one("#report-head", Static).update(_head(event.report))
        rows = [FlaggedRow(e.id, _row(e), e.flags) for e in event.report.specimens]
        self.flagged = rows
        self.on_resize()  # fills the table
        self.query_one("#report-totals", Static).update(_totals(event.report))

    def action_write(self) -> None:
        fmt = str(self.query_one("#report-format", Select).value)
        name = self.query_one("#report-file", Input).value.strip()
        self.show_outcome(f"… writing the {fmt.upper()} report", error=False)
        self.write(fmt, name)

    @on(Input.Submitted, "#report-file")
    def _name_typed(self) -> None:
        self.action_write()

    @work(thread=True, exclusive=True, group="write")
    def write(self, fmt: str, name: str) -> None:
        folder = tracker_app(self).out_dir
        target = None if not name else folder / Path(name).expanduser()  # absolute stays
        try:
            written = report_files.write_return_report(
                database(self), operator(self), self.loan, fmt, target, folder
            )
        except TargetExists as error:
            said = "already exists; type another file name (nothing was written or recorded)"
            self.post_message(Refused(InputError("file", error.value, said), "write"))
            return
        except TrackerError as error:
            error.field = "file" if error.field == "out" else error.field
            self.post_message(Refused(error, "write"))
            return
        self.post_message(self.Written(written))

    def on_report_screen_written(self, event: Written) -> None:
        w = event.written
        photos = f", {w.photos} photo(s) in {w.photo_folder.name}" if w.photo_folder else ""
        self.show_outcome(
            f"✓ wrote {w.target} (sha256 {w.sha256[:16]}…) with its ledger anchor{photos}"
            f" · ledger event #{w.record.event_seq}",
            error=False,
        )
        tracker_app(self).tell(f"✓ return report written: {w.target.name}", title="Report")

    def on_refused(self, event: Refused) -> None:
        event.stop()
        if event.purpose == "build":
            self.query_one("#report-head", Static).update(refusal_text(event.error))
        self.show_outcome(refusal_text(event.error), error=True)

    def show_outcome(self, text: str | Text, *, error: bool) -> None:
        show_outcome(self.query_one("#outcome", Static), text, error=error)


def _head(report: ReturnReport) -> Text:
    loan, lender = report.loan, report.lender
    text = Text()
    text.append(shown(f"{loan['reference']} · {loan['title'] or ''}\n", style="bold"))
    text.append(shown(f"lender {lender['name']} ({lender['institution_code'] or '—'}) · "))
    text.append(f"{loan['status']} · due {loan['due_on']}")
    text.append(f" · returned {loan['returned_on']}\n" if loan["returned_on"] else "\n")
    terms = report.terms_in_force
    text.append(shown(f"terms v{terms.version}: {', '.join(terms.permitted_tissues)}\n"))
    mark, style = ("✓ intact", "green") if report.ledger.vouched else ("✗ BROKEN", "bold red")
    text.append(f"ledger {mark}", style=style)
    text.append(f" · head #{report.ledger.seq} {report.ledger.hash[:16]}…")
    return text


def _row(entry: SpecimenEntry) -> tuple[str | Text, ...]:
    """Two lines a cell, so the flags keep room at 80 columns: the specimen and its catalogue
    number, its status and results, powder drilled and returned."""
    drilled = precision.milligrams(entry.drilled_mg, entry.drilled_u_mg) if entry.sampled else "—"
    returned = sum(p.left_mg for p in entry.powders if p.status == "returned")
    back = precision.milligrams(returned) if entry.powders else "—"
    return (
        shown(f"{entry.id}\n{entry.catalog_number}"),
        f"{entry.status.replace('_', ' ')}\n{len(entry.results)} result(s)",
        f"{drilled}\n{back} back",
    )


def _totals(report: ReturnReport) -> Text:
    t = report.totals
    limit = precision.limit_mg(t.max_total_mass_mg)
    text = Text()
    text.append(f"{t.specimens} specimens, {t.sampled} sampled · drilled ", style="bold")
    text.append(f"{precision.milligrams(t.drilled_mg, t.drilled_u_mg)} of {limit}\n", style="bold")
    text.append(f"powder dissolved {precision.milligrams(t.dissolved_mg)} · returned ")
    text.append(f"{precision.milligrams(t.powder_returned_mg)} · ")
    left = (f"{label} {precision.milligrams(report.powder_left_mg(s))}" for s, label in FATES)
    text.append(" · ".join(left))
    text.append(f" · still held {precision.milligrams(t.powder_on_hand_mg)}\n")
    text.append_text(flag_text(report.flags))
    return text
