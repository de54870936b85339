"""A loan's results per specimen (value, 2SD and n), on the scale a person chooses: as
measured, or the scale of a reference material whose accepted δ is known for at least one δ
the loan has (``results.scales``), so no choice offered is refused; a δ the scale has no
value for stays as measured and says so ("no scale value"). A second chooser puts every δ
of an element on one ratio by a mass-dependent law (``results.ratios``), as `tracker
results --ratio R --law L` does. The list is the CLI's ``tracker results`` rendering
(``present.lab.results_table``), drawn here as it prints."""

from __future__ import annotations

from rich.console import RenderableType
from textual import on, work
from textual.app import ComposeResult
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.message import Message
from textual.widgets import Select, Static

from tracker.domain.errors import TrackerError
from tracker.domain.isotopes import LAWS
from tracker.present.lab import results_table
from tracker.services.instrument import results
from tracker.services.instrument.results import SpecimenResult
from tracker.ui.context import database
from tracker.ui.messages import Refused
from tracker.ui.plain import shown

AS_MEASURED = ""  # the chooser's value for the scale each session measured on
AS_MEASURED_LABEL = "as measured (each session's own standard)"
ON_MEASURED_LABEL = "each δ on its own ratio"


class ResultsPane(Vertical):
    """The Results tab of a loan: a scale chooser above the results list."""

    class Loaded(Message):
        def __init__(
            self, rows: list[SpecimenResult], scales: list[str], ratios: list[str], asked: str
        ) -> None:
            super().__init__()
            self.rows, self.scales, self.ratios, self.asked = rows, scales, ratios, asked

    def __init__(self, *, id: str) -> None:
        super().__init__(id=id)
        self.loan: str | None = None
        self.scale = AS_MEASURED
        self.ratio = AS_MEASURED  # "44/40 exponential": a ratio and a law, or as measured
        self.offered: tuple[list[str], list[str]] = ([], [])

    def compose(self) -> ComposeResult:
        with Horizontal(classes="scale-choice"):
            yield Static("Scale", classes="field-label")
            yield self._chooser(AS_MEASURED_LABEL, "results-scale")
            yield Static("Ratio", classes="field-label")
            yield self._chooser(ON_MEASURED_LABEL, "results-ratio")
        with VerticalScroll(id="results-scroll"):
            yield Static("reading the results …", id="results-list")

    @staticmethod
    def _chooser(label: str, id: str) -> Select[str]:
        return Select(
            [(label, AS_MEASURED)], value=AS_MEASURED, allow_blank=False, compact=True, id=id
        )

    def show(self, loan: str) -> None:
        """Read (again) the loan's results on the scale and ratio chosen."""
        self.loan = loan
        self.load(loan, self.scale, self.ratio)

    def choose_scale(self) -> None:
        """Open the scale chooser, as a key press does (v on the loan)."""
        self._open("#results-scale")

    def choose_ratio(self) -> None:
        """Open the ratio chooser, as a key press does (r on the loan)."""
        self._open("#results-ratio")

    def _open(self, selector: str) -> None:
        chooser = self.query_one(selector, Select)
        chooser.focus()
        chooser.expanded = True

    @work(thread=True, exclusive=True, group="results")
    def load(self, loan: str, scale: str, ratio: str) -> None:
        on, _, law = ratio.partition(" ")
        try:
            db = database(self)
            rows = results.results(db, loan, scale or None, on or None, law or "exponential")
            scales, ratios = results.scales(db, loan), results.ratios(db, loan)
        except TrackerError as error:
            self.post_message(Refused(error, "results"))
            return
        self.post_message(self.Loaded(rows, scales, ratios, f"{scale}|{ratio}"))

    def on_results_pane_loaded(self, event: Loaded) -> None:
        event.stop()
        if event.asked != f"{self.scale}|{self.ratio}":
            return  # a newer choice is being read
        if (event.scales, event.ratios) != self.offered:
            self.offered = (event.scales, event.ratios)
            scales = [(shown(name), name) for name in event.scales]
            self._offer("#results-scale", [(AS_MEASURED_LABEL, AS_MEASURED), *scales], self.scale)
            ratios = [
                (f"δ{ratio}, {law} law", f"{ratio} {law}") for ratio in event.ratios for law in LAWS
            ]
            self._offer("#results-ratio", [(ON_MEASURED_LABEL, AS_MEASURED), *ratios], self.ratio)
        self.query_one("#results-list", Static).update(results_table(event.rows))

    def _offer(self, selector: str, options: list[tuple[RenderableType, str]], chosen: str) -> None:
        chooser = self.query_one(selector, Select)
        with chooser.prevent(Select.Changed):
            chooser.set_options(options)
            chooser.value = chosen if chosen in {value for _, value in options} else AS_MEASURED

    @on(Select.Changed, "#results-scale, #results-ratio")
    def _chosen(self, event: Select.Changed) -> None:
        event.stop()
        chosen = AS_MEASURED if event.select.is_blank() else str(event.value)
        scale, ratio = (
            (chosen, self.ratio) if event.select.id == "results-scale" else (self.scale, chosen)
        )
        if (scale, ratio) != (self.scale, self.ratio) and self.loan is not None:
            self.scale, self.ratio = scale, ratio
            self.query_one("#results-list", Static).update("reading the results …")
            self.load(self.loan, scale, ratio)
