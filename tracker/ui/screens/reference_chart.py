"""A reference material's control chart: each session's mean against the limits the other
sessions set (their mean ± 2SD), chosen among the materials, ratios and scales there are
results for (``reproducibility.charts``). The chart is the CLI's ``tracker reference chart``
rendering (``present.control.control_table``), drawn here as it prints."""

from __future__ import annotations

from typing import ClassVar

from rich.console import RenderableType
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, VerticalScroll
from textual.message import Message
from textual.screen import Screen
from textual.widgets import Footer, Select, Static

from tracker.domain.errors import TrackerError
from tracker.present.control import choice_label, control_table
from tracker.services.instrument import reproducibility
from tracker.services.instrument.reproducibility import ChartChoice
from tracker.ui.context import database
from tracker.ui.messages import Refused, refusal_text
from tracker.ui.plain import shown
from tracker.ui.widgets.operator_bar import OperatorBar

NOTHING_YET = (
    "No reference material has been measured yet. A chart appears here once a session "
    "that measured one is reduced: F4, i to import the instrument's export, then r."
)


class ReferenceChartScreen(Screen[None]):
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("v", "choose", "Choose chart", id="chart.choose"),
        Binding("escape", "app.previous", "Back", id="chart.back"),
    ]

    class Offered(Message):
        def __init__(self, choices: list[ChartChoice]) -> None:
            super().__init__()
            self.choices = choices

    class Drawn(Message):
        def __init__(self, index: int, chart: RenderableType) -> None:
            super().__init__()
            self.index, self.chart = index, chart

    def __init__(self) -> None:
        super().__init__()
        self.choices: list[ChartChoice] = []
        self.chosen: int | None = None  # the choice being read or shown

    def compose(self) -> ComposeResult:
        yield OperatorBar("Reference material control chart")
        with Horizontal(classes="scale-choice", id="chart-choice-row"):
            yield Static("Chart", classes="field-label")
            yield Select[int]([], prompt="choose a chart", compact=True, id="chart-choice")
        with VerticalScroll(id="chart-scroll"):
            yield Static("reading the reference materials measured …", id="chart-body")
        yield Static("", id="outcome")
        yield Footer(compact=True)

    def on_mount(self) -> None:
        self.offer()

    def action_choose(self) -> None:
        """Open the chooser, as a key press does (v)."""
        chooser = self.query_one("#chart-choice", Select)
        if self.choices:
            chooser.focus()
            chooser.expanded = True

    @work(thread=True, exclusive=True, group="chart-choices")
    def offer(self) -> None:
        try:
            choices = reproducibility.charts(database(self))
        except TrackerError as error:
            self.post_message(Refused(error, "choices"))
            return
        self.post_message(self.Offered(choices))

    @work(thread=True, exclusive=True, group="chart")
    def draw(self, index: int, choice: ChartChoice) -> None:
        try:
            chart = reproducibility.control_chart(
                database(self), choice.reference, choice.ratio, choice.scale
            )
        except TrackerError as error:
            self.post_message(Refused(error, "chart"))
            return
        self.post_message(self.Drawn(index, control_table(chart)))

    def on_reference_chart_screen_offered(self, event: Offered) -> None:
        event.stop()
        self.choices = event.choices
        self.query_one("#chart-choice-row").display = bool(self.choices)
        if not self.choices:
            self.query_one("#chart-body", Static).update(shown(NOTHING_YET))
            return
        chooser = self.query_one("#chart-choice", Select)
        with chooser.prevent(Select.Changed):
            chooser.set_options([(shown(choice_label(c)), i) for i, c in enumerate(self.choices)])
            chooser.value = 0
        chooser.focus()
        self._read(0)

    def on_reference_chart_screen_drawn(self, event: Drawn) -> None:
        event.stop()
        if event.index == self.chosen:  # else a newer choice is being read
            self.query_one("#chart-body", Static).update(event.chart)

    def on_refused(self, event: Refused) -> None:
        outcome = self.query_one("#outcome", Static)
        outcome.update(refusal_text(event.error))
        outcome.set_class(True, "-error")

    @on(Select.Changed, "#chart-choice")
    def _chosen(self, event: Select.Changed) -> None:
        event.stop()
        if isinstance(event.value, int) and event.value != self.chosen:
            self._read(event.value)

    def _read(self, index: int) -> None:
        self.chosen = index
        choice = self.choices[index]
        self.query_one("#chart-body", Static).update(
            shown(f"reading the chart of {choice_label(choice)} …")
        )
        self.draw(index, choice)
