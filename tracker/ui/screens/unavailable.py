"""Placeholder for the return report and manifest import: their services (issue 6) are not
in this build yet. The screen says so plainly instead of pretending."""

from __future__ import annotations

from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.screen import Screen
from textual.widgets import Footer, Static

from tracker.ui.widgets.operator_bar import OperatorBar


class UnavailableScreen(Screen[None]):
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "app.previous", "Back", id="unavailable.back"),
    ]

    def __init__(self, what: str, loan: str = "") -> None:
        super().__init__()
        self.what, self.loan = what, loan

    def compose(self) -> ComposeResult:
        yield OperatorBar(f"{self.what.capitalize()} {self.loan}".strip())
        yield Static(
            f"⚠ NOT AVAILABLE YET: the {self.what} needs the return-report and manifest "
            "services (issue 6), which are not part of this build.\n\n"
            "Until then: `tracker reconcile --loan REFERENCE` prints where every milligram "
            "went, and `tracker results --loan REFERENCE` the results to report.",
            id="unavailable",
        )
        yield Footer(compact=True)
