"""Asking before a step that cannot be taken back: an override of a loan's limits, printing
every queued label. The question says what will happen; y goes on, n or Esc does nothing."""

from __future__ import annotations

from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Footer, Static

from tracker.ui.plain import shown


class ConfirmScreen(ModalScreen[bool]):
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("y", "answer(True)", "Yes, go on", id="confirm.yes"),
        Binding("n", "answer(False)", "No", id="confirm.no"),
        Binding("escape", "answer(False)", "No", id="confirm.cancel", show=False),
    ]

    def __init__(self, question: str, detail: str = "") -> None:
        super().__init__()
        self.question, self.detail = question, detail

    def compose(self) -> ComposeResult:
        with Vertical(id="confirm-box"):
            yield Static(shown(self.question, style="bold"), id="confirm-question")
            if self.detail:
                yield Static(shown(self.detail), id="confirm-detail")
            yield Static("y: yes, go on · n or Esc: no, nothing is done", classes="hint")
        yield Footer(compact=True)

    def action_answer(self, yes: bool) -> None:
        self.dismiss(yes)
