"""A loan's strontium age screening: which curve it is screened against, then each
specimen's measured ⁸⁷Sr/⁸⁶Sr beside what the curve expects at its stated age, with the
service's verdict — the CLI's ``tracker screen`` text (``present.lab.screening_text``)."""

from __future__ import annotations

from rich.text import Text
from textual import work
from textual.app import ComposeResult
from textual.containers import Vertical, VerticalScroll
from textual.message import Message
from textual.widgets import Static

from tracker.domain.errors import TrackerError
from tracker.present.lab import curve_text, screening_text
from tracker.services.instrument import screening
from tracker.services.instrument.screening import CurveView, Screening
from tracker.ui.context import database
from tracker.ui.messages import Refused

NO_CURVE = "No Sr curve chosen for this loan yet: press u to choose one of the stored curves."


class ScreeningPane(Vertical):
    """The Sr screening tab of a loan."""

    curve: str | None = None  # the name of the curve shown, once read

    class Loaded(Message):
        def __init__(self, curve: CurveView | None, lines: list[Screening]) -> None:
            super().__init__()
            self.curve, self.lines = curve, lines

    def compose(self) -> ComposeResult:
        yield Static("reading the screening …", id="screening-curve")
        with VerticalScroll(id="screening-scroll"):
            yield Static("", id="screening-lines")

    def show(self, loan: str) -> None:
        self.load(loan)

    @work(thread=True, exclusive=True, group="screening")
    def load(self, loan: str) -> None:
        try:
            db = database(self)
            curve = screening.chosen_curve(db, loan)
            lines = [] if curve is None else screening.screen(db, loan)
        except TrackerError as error:
            self.post_message(Refused(error, "screening"))
            return
        self.post_message(self.Loaded(curve, lines))

    def on_screening_pane_loaded(self, event: Loaded) -> None:
        event.stop()
        self.curve = None if event.curve is None else event.curve.name
        head = self.query_one("#screening-curve", Static)
        body = self.query_one("#screening-lines", Static)
        if event.curve is None:
            head.update(NO_CURVE)
            body.update("")
            return
        head.update(Text.assemble(curve_text(event.curve), " · u chooses another"))
        body.update(screening_text(event.lines))
