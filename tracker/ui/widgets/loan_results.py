"""A loan's results per specimen (value, 2SD and n), on the scale a person chooses: as
measured, or the scale of a reference material whose accepted δ is known for at least one δ
the loan has (``results.scales``), so no choice offered is refused; a δ the scale has no
value for stays as measured and says so ("no scale value"). The list is the CLI's
``tracker results`` rendering (``present.lab.results_table``), drawn here as it prints."""

from __future__ import annotations

from textual import on, work
from textual.app import ComposeResult
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.message import Message
from textual.widgets import Select, Static

from tracker.domain.errors import TrackerError
from tracker.present.lab import results_table
from tracker.services.instrument import results
from tracker.services.instrument.results import SpecimenResult
from tracker.ui.context import database
from tracker.ui.messages import Refused
from tracker.ui.plain import shown

AS_MEASURED = ""  # the chooser's value for the scale each session measured on
AS_MEASURED_LABEL = "as measured (each session's own standard)"


class ResultsPane(Vertical):
    """The Results tab of a loan: a scale chooser above the results list."""

    class Loaded(Message):
        def __init__(self, rows: list[SpecimenResult], scales: list[str], scale: str) -> None:
            super().__init__()
            self.rows, self.scales, self.scale = rows, scales, scale

    def __init__(self, *, id: str) -> None:
        super().__init__(id=id)
        self.loan: str | None = None
        self.scale = AS_MEASURED
        self.offered: list[str] = []

    def compose(self) -> ComposeResult:
        with Horizontal(classes="scale-choice"):
            yield Static("Scale", classes="field-label")
            yield Select(
                [(AS_MEASURED_LABEL, AS_MEASURED)],
                value=AS_MEASURED,
                allow_blank=False,
                compact=True,
                id="results-scale",
            )
        with VerticalScroll(id="results-scroll"):
            yield Static("reading the results …", id="results-list")

    def show(self, loan: str) -> None:
        """Read (again) the loan's results on the scale chosen."""
        self.loan = loan
        self.load(loan, self.scale)

    def choose_scale(self) -> None:
        """Open the chooser, as a key press does (v on the loan)."""
        chooser = self.query_one("#results-scale", Select)
        chooser.focus()
        chooser.expanded = True

    @work(thread=True, exclusive=True, group="results")
    def load(self, loan: str, scale: str) -> None:
        try:
            db = database(self)
            rows = results.results(db, loan, scale or None)
            scales = results.scales(db, loan)
        except TrackerError as error:
            self.post_message(Refused(error, "results"))
            return
        self.post_message(self.Loaded(rows, scales, scale))

    def on_results_pane_loaded(self, event: Loaded) -> None:
        event.stop()
        if event.scale != self.scale:
            return  # a newer choice is being read
        if event.scales != self.offered:
            self.offered = event.scales
            chooser = self.query_one("#results-scale", Select)
            with chooser.prevent(Select.Changed):
                options = [(shown(name), name) for name in event.scales]
                chooser.set_options([(AS_MEASURED_LABEL, AS_MEASURED), *options])
                chooser.value = self.scale if self.scale in event.scales else AS_MEASURED
        self.query_one("#results-list", Static).update(results_table(event.rows))

    @on(Select.Changed, "#results-scale")
    def _scale_chosen(self, event: Select.Changed) -> None:
        event.stop()
        chosen = AS_MEASURED if event.select.is_blank() else str(event.value)
        if chosen != self.scale and self.loan is not None:
            self.scale = chosen
            self.query_one("#results-list", Static).update(
                f"reading the results on {chosen or 'the scales measured'} …"
            )
            self.load(self.loan, chosen)
