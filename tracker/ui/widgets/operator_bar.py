"""The line at the top of every screen: who is recording, on which database, and the last scan."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.containers import Horizontal
from textual.widgets import Static

from tracker.ui.context import tracker_app


class OperatorBar(Horizontal):
    """Shows the operator (and role) at all times; watches the app's reactive attributes."""

    def __init__(self, title: str) -> None:
        super().__init__(classes="operator-bar")
        self.title = title

    def compose(self) -> ComposeResult:
        yield Static(self.title, classes="bar-title")
        yield Static("", id="bar-status", classes="bar-status")
        yield Static("", id="bar-operator", classes="bar-operator")

    def on_mount(self) -> None:
        app = tracker_app(self)
        self.watch(app, "operator_label", self._show_operator)
        self.watch(app, "status_line", self._show_status)

    def _show_operator(self, label: str) -> None:
        self.query_one("#bar-operator", Static).update(label)

    def _show_status(self, line: str) -> None:
        self.query_one("#bar-status", Static).update(line)
