"""The line at the top of every screen: who is recording, on which database, and the last scan."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.containers import Horizontal
from textual.widgets import Static

from tracker.ui.context import tracker_app
from tracker.ui.plain import shown


class OperatorBar(Horizontal):
    """Shows the operator (and role) at all times; watches the app's reactive attributes."""

    def __init__(self, title: str) -> None:
        super().__init__(classes="operator-bar")
        self.title = title

    def compose(self) -> ComposeResult:
        app = tracker_app(self)  # the bars start with the app's current values ...
        yield Static(shown(self.title), classes="bar-title")
        yield Static(shown(app.status_line), id="bar-status", classes="bar-status")
        yield Static(shown(app.operator_label), id="bar-operator", classes="bar-operator")

    def on_mount(self) -> None:
        # ... and follow its changes. Not asked for the current value here: on a busy machine
        # Mount can arrive before the composed lines are in the DOM, and they already show it.
        app = tracker_app(self)
        self.watch(app, "operator_label", self._show_operator, init=False)
        self.watch(app, "status_line", self._show_status, init=False)

    def show_title(self, title: str) -> None:
        """Say what the screen now shows (a screen that switches views calls this)."""
        self.title = title
        for bar in self.query(".bar-title").results(Static):
            bar.update(shown(title))

    def _show_operator(self, label: str) -> None:
        for line in self.query("#bar-operator").results(Static):
            line.update(shown(label))

    def _show_status(self, line: str) -> None:
        for bar in self.query("#bar-status").results(Static):
            bar.update(shown(line))
