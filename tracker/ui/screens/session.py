"""Instrument sessions: import through a profile, unmatched rows (matched by hand or by
catalogue number), reduced results with 2SD and n, reference materials ✓ pass / ✗ FAIL, and
the bracketing standard's drift."""

from __future__ import annotations

from typing import Any, ClassVar

from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.message import Message
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Static, TabbedContent, TabPane

from tracker.domain.errors import TrackerError
from tracker.present import lab
from tracker.present.bars import flag_cell, flag_text, words_cell
from tracker.present.lab import accepted_text, names_matched_lines
from tracker.services.core.views import Done
from tracker.services.instrument import reduction, run_matching, session_detail, sessions
from tracker.services.instrument.reduction import ResultLine
from tracker.services.instrument.run_matching import NamesMatched
from tracker.services.instrument.session_detail import SessionDetail
from tracker.services.instrument.sessions import DriftSeries
from tracker.services.read import browse
from tracker.services.read.browse import SessionLine
from tracker.ui.context import database, operator, tracker_app
from tracker.ui.messages import Refused, refusal_text
from tracker.ui.plain import shown
from tracker.ui.screens.session_import import ImportSessionScreen
from tracker.ui.screens.tabs import TabKeys, tab_keys
from tracker.ui.widgets import flagged_rows
from tracker.ui.widgets.drift_plot import DriftPlot
from tracker.ui.widgets.flagged_rows import FlaggedRow, LastColumn
from tracker.ui.widgets.operator_bar import OperatorBar


class SessionScreen(TabKeys, Screen[None]):
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("i", "import_session", "Import", id="session.import"),
        Binding("r", "reduce", "Reduce", id="session.reduce"),
        Binding("m", "match_row", "Match row", id="session.match_row"),
        Binding("n", "match_names", "Match by name", id="session.match_names"),
        Binding("o", "other_session", "Other session", id="session.other"),
        # not in the footer (full at 80 columns): in the help and the palette
        Binding("l", "app.reference_chart", "Control chart", id="session.chart", show=False),
        Binding("escape", "app.previous", "Back", id="session.back"),
        *tab_keys(
            ("tab-results", "Results"), ("tab-unmatched", "Unmatched"), ("tab-drift", "Drift")
        ),
    ]

    class Listed(Message):
        def __init__(self, sessions: list[SessionLine]) -> None:
            super().__init__()
            self.sessions = sessions

    class Loaded(Message):
        def __init__(self, detail: SessionDetail, drift: DriftSeries) -> None:
            super().__init__()
            self.detail, self.drift = detail, drift

    class Reduced(Message):
        def __init__(self, done: Done[Any]) -> None:
            super().__init__()
            self.done = done

    class MatchedByName(Message):
        def __init__(self, done: Done[NamesMatched]) -> None:
            super().__init__()
            self.done = done

    def __init__(self, session: str | None) -> None:
        super().__init__()
        self.session = session
        self.detail: SessionDetail | None = None  # the session shown, refitted on a resize

    def compose(self) -> ComposeResult:
        yield OperatorBar("Instrument session")
        yield Static("", id="session-head")
        yield DataTable(id="sessions", cursor_type="row", zebra_stripes=True)
        with TabbedContent(id="session-tabs"):
            with TabPane("Results", id="tab-results"):
                yield DataTable(id="results", cursor_type="row", zebra_stripes=True)
            with TabPane("Unmatched rows", id="tab-unmatched"):
                yield DataTable(id="unmatched", cursor_type="row")
            with TabPane("Standard drift", id="tab-drift"):
                yield DriftPlot(id="drift")
        yield Static("", id="outcome")
        yield Footer(compact=True)

    def on_mount(self) -> None:
        for table_id, labels in (
            (
                "#sessions",
                ("Session", "Name", "Element", "Started", "Runs", "Unmatched", "Results"),
            ),
        ):
            table = self.query_one(table_id, DataTable)
            for label in labels:
                table.add_column(label)
        self.refresh_view()

    def on_screen_resume(self) -> None:
        self.refresh_view()

    def refresh_view(self) -> None:
        showing = self.session is not None
        self.query_one("#sessions").display = not showing
        self.query_one("#session-tabs").display = showing
        if self.session is not None:
            self.load(self.session)
        else:
            self.query_one("#session-head", Static).update(
                "Choose a session (Enter) or import an export (i)."
            )
            self.list_sessions()

    @work(thread=True, exclusive=True, group="load")
    def list_sessions(self) -> None:
        self.post_message(self.Listed(browse.list_sessions(database(self))))

    @work(thread=True, exclusive=True, group="load")
    def load(self, session: str) -> None:
        try:
            db = database(self)
            detail = session_detail.session_detail(db, session)
            drift = sessions.standard_drift(db, session)
        except TrackerError as error:
            self.post_message(Refused(error, "load"))
            return
        self.post_message(self.Loaded(detail, drift))

    def on_session_screen_listed(self, event: Listed) -> None:
        table = self.query_one("#sessions", DataTable)
        table.clear()
        for s in event.sessions:
            table.add_row(
                s.id,
                shown(s.name),
                s.element,
                s.started_at.strftime("%Y-%m-%d"),
                str(s.runs),
                str(s.unmatched),
                str(s.results),
                key=s.id,
            )
        table.focus()

    @on(DataTable.RowSelected, "#sessions")
    def _chosen(self, event: DataTable.RowSelected) -> None:
        if event.row_key.value:
            self.session = str(event.row_key.value)
            self.refresh_view()

    def on_session_screen_loaded(self, event: Loaded) -> None:
        d = event.detail
        self.session = d.id
        head = Text()
        head.append(shown(f"{d.id} {d.name} · {d.element} · {d.instrument}\n", style="bold"))
        head.append(
            shown(
                f"file {d.source_filename or '—'} via profile {d.profile or '—'} · standard "
                f"{d.standard} · {d.measurements} runs, {d.standards} standards\n"
            )
        )
        head.append(f"{len(d.unmatched)} unmatched row(s) · ")
        if d.matched_since_reduced:
            head.append("⚠ rows matched since the last reduction: reduce again (press r) · ")
        else:
            head.append("reduced · " if d.reduced else "⚠ not reduced yet (press r) · ")
        head.append_text(flag_text(d.flags))
        self.query_one("#session-head", Static).update(head)
        self.detail = d
        self.fill_tables()
        self.query_one("#drift", DriftPlot).show(event.drift)

    def on_resize(self) -> None:
        self.fill_tables()

    def fill_tables(self) -> None:
        """Results and unmatched rows; their last column wraps in what the others leave."""
        d = self.detail
        if d is None:
            return
        results = [
            FlaggedRow(str(n), result_cells(line, d.mode), qc_words(line, d.mode))
            for n, line in enumerate(d.results)
        ]
        width = self.size.width
        table = self.query_one("#results", DataTable)
        flagged_rows.fill(table, RESULT_COLUMNS, results, width, last=("QC / flags", flag_cell))
        unmatched = [
            FlaggedRow(str(u.run_order), (str(u.run_order), shown(u.sample_name)), [u.reason])
            for u in d.unmatched
        ]
        table = self.query_one("#unmatched", DataTable)
        flagged_rows.fill(table, UNMATCHED_COLUMNS, unmatched, width, last=WHY_UNMATCHED)

    def on_refused(self, event: Refused) -> None:
        outcome = self.query_one("#outcome", Static)
        outcome.update(refusal_text(event.error))
        outcome.set_class(True, "-error")

    def action_import_session(self) -> None:
        self.app.push_screen(ImportSessionScreen())

    def action_other_session(self) -> None:
        self.session = None
        self.refresh_view()

    def action_reduce(self) -> None:
        if self.session is not None:
            self.query_one("#outcome", Static).update("… reducing")
            self.reduce(self.session)

    def action_match_row(self) -> None:
        """The form for the highlighted unmatched row, its session and run filled in."""
        if self.session is None:
            self._say("Choose a session first (Enter).")
            return
        table = self.query_one("#unmatched", DataTable)
        if table.row_count == 0:
            self._say("This session has no unmatched rows.")
            return
        self.query_one("#session-tabs", TabbedContent).active = "tab-unmatched"
        run = table.coordinate_to_cell_key(table.cursor_coordinate).row_key.value
        prefilled = {"session": self.session, "run-order": str(run)}
        tracker_app(self).action_bench("match_row", **prefilled)

    def action_match_names(self) -> None:
        if self.session is not None:
            self._say("… matching rows named by a catalogue number")
            self.match_names(self.session)

    def _say(self, text: str | Text) -> None:
        outcome = self.query_one("#outcome", Static)
        outcome.set_class(False, "-error")
        outcome.update(text if isinstance(text, Text) else Text(text))

    @work(thread=True, exclusive=True, group="save")
    def match_names(self, session: str) -> None:
        try:
            done = run_matching.match_by_name(database(self), operator(self), {"session": session})
        except TrackerError as error:
            self.post_message(Refused(error, "match"))
            return
        self.post_message(self.MatchedByName(done))

    def on_session_screen_matched_by_name(self, event: MatchedByName) -> None:
        lines = names_matched_lines(event.done.item)
        lines[0] = f"✓ {lines[0]} · event #{event.done.event_seq} · press r to reduce again"
        self._say(shown("\n".join(lines)))
        self.refresh_view()

    @work(thread=True, exclusive=True, group="save")
    def reduce(self, session: str) -> None:
        try:
            done = reduction.reduce_session(database(self), operator(self), {"session": session})
        except TrackerError as error:
            self.post_message(Refused(error, "reduce"))
            return
        self.post_message(self.Reduced(done))

    def on_session_screen_reduced(self, event: Reduced) -> None:
        answer = event.done.item
        failed = sum(1 for x in answer.results if x.passed is False)
        outcome = self.query_one("#outcome", Static)
        outcome.set_class(failed > 0, "-error")
        outcome.update(
            f"✓ reduced: {len(answer.results)} results · event #{event.done.event_seq}"
            + (f" · ✗ {failed} reference material(s) FAILED" if failed else " · ✓ QC passed")
        )
        self.refresh_view()


RESULT_COLUMNS = ("Target", "Ratio", "Value", "2SD", "n")
UNMATCHED_COLUMNS = ("Run", "Sample name")
WHY_UNMATCHED: LastColumn = ("Why not matched", words_cell)


def result_cells(line: ResultLine, mode: str) -> tuple[Text | str, ...]:
    """A result's target, ratio, value, 2SD and number of runs."""
    value, two_sd = lab.result_cells(mode, line.value, line.two_sd)
    return (shown(line.label), shown(line.ratio), value, two_sd, str(line.n))


def qc_words(line: ResultLine, mode: str) -> list[str]:
    """A reference material's verdict against its accepted value, then the result's flags."""
    flags = [f for f in line.flags if f != "failed acceptance"]
    if line.passed is False:
        return [f"FAIL (accepted {accepted_text(line, mode)}, 2SD)", *flags]
    return ["pass", *flags] if line.passed else flags
