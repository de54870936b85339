"""An ID field: type or scan an ID; the hint under it says what it names, or why not.

The lookup runs in a thread worker through ``labels.read_scan`` (the same reading as the
``tracker lookup`` command: any case, with or without hyphens, the lab's URI prefix);
a wrong check character shows as a visible ✗ line.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from textual import work
from textual.app import ComposeResult
from textual.containers import Horizontal, Vertical
from textual.message import Message
from textual.suggester import SuggestFromList
from textual.timer import Timer
from textual.widgets import Input, Static

from tracker.domain.errors import TrackerError
from tracker.ui.context import database
from tracker.ui.plain import shown
from tracker.ui.widgets.field_label import FieldLabel

if TYPE_CHECKING:  # the label services load lineage and label facts: only a lookup needs them
    from tracker.services.labels.handling import ScanView

LOOKUP_DELAY = 0.25  # seconds of quiet typing before the hint looks the ID up


class IdInput(Input):
    """The text box of an ID field; a scan anywhere fills the focused one."""

    class Scanned(Message):
        def __init__(self, field: IdInput, text: str) -> None:
            super().__init__()
            self.field, self.text = field, text

    def fill_from_scan(self, text: str) -> None:
        self.value = text.strip()
        self.cursor_position = len(self.value)
        self.post_message(self.Scanned(self, self.value))


class IdListInput(IdInput):
    """A text box for several IDs, separated by commas: each scan is added to the end, and
    the cursor stays to take the next one."""

    SEPARATOR = ", "

    def fill_from_scan(self, text: str) -> None:
        typed = self.value.rstrip().rstrip(",").rstrip()
        self.value = f"{typed}{self.SEPARATOR if typed else ''}{text.strip()}"
        self.cursor_position = len(self.value)

    @classmethod
    def ids(cls, text: str) -> list[str]:
        """The IDs (or catalogue numbers, which may hold spaces) in what was typed."""
        return [part.strip() for part in text.split(",") if part.strip()]


class IdField(Vertical):
    """Label, ID input and a hint line; posts :class:`IdField.Resolved` after each lookup."""

    class Resolved(Message):
        def __init__(
            self, field: IdField, view: ScanView | None, error: TrackerError | None, seq: int = 0
        ) -> None:
            super().__init__()
            self.field, self.view, self.error, self.seq = field, view, error, seq

        @property
        def control(self) -> IdField:
            return self.field

    class Scanned(Message):
        """An ID arrived by scanner (not typed): screens may act at once (add it to a batch)."""

        def __init__(self, field: IdField, text: str) -> None:
            super().__init__()
            self.field, self.text = field, text

        @property
        def control(self) -> IdField:
            return self.field

    def __init__(
        self,
        label: str,
        *,
        name: str,
        value: str = "",
        hint: str = "scan or type an ID",
        offers_locations: bool = False,
    ) -> None:
        super().__init__(classes="field id-field", id=f"field-{name}")
        self.offers_locations = offers_locations  # typing a place's name completes it
        self.label, self.field_name = label, name
        self._value, self._hint_text = value, hint
        self._timer: Timer | None = None
        self._seq = 0  # only the newest lookup's answer is shown
        self.view: ScanView | None = None

    def compose(self) -> ComposeResult:
        with Horizontal(classes="field-row"):
            yield FieldLabel(self.label, self._hint_text)
            yield IdInput(self._value, id=f"f-{self.field_name}", compact=True)
        yield Static("", classes="field-hint")

    def on_mount(self) -> None:
        if self._value:
            self.lookup(self._value)
        if self.offers_locations:
            self._offer_locations()

    @work(thread=True, group="id-places")
    def _offer_locations(self) -> None:
        """The lab's places by name, offered as the person types (→ takes the offer)."""
        from tracker.services.admin import setup

        try:
            names = sorted({place.name for place in setup.list_locations(database(self))})
        except TrackerError:
            return  # no offers; the field still takes an ID or a name
        self.app.call_from_thread(self._suggest, names)

    def _suggest(self, names: list[str]) -> None:
        self.input.suggester = SuggestFromList(names, case_sensitive=False)

    @property
    def input(self) -> IdInput:
        return self.query_one(IdInput)

    @property
    def value(self) -> str:
        return self.input.value.strip()

    def set_value(self, text: str) -> None:
        self.input.value = text
        self.lookup(text)

    def on_input_changed(self, event: Input.Changed) -> None:
        # not stopped: the form hears every change too (it clears a refusal that has passed)
        if self._timer is not None:
            self._timer.stop()
        text = event.value.strip()
        if not text:
            self.view = None
            self._hint("")
            return
        self._timer = self.set_timer(LOOKUP_DELAY, lambda: self.lookup(text))

    def on_id_input_scanned(self, event: IdInput.Scanned) -> None:
        event.stop()
        if self._timer is not None:
            self._timer.stop()
        self.lookup(event.text)
        self.post_message(self.Scanned(self, event.text))

    def on_input_submitted(self, event: Input.Submitted) -> None:
        if self._timer is not None:
            self._timer.stop()
        if event.value.strip():
            self.lookup(event.value.strip())

    def lookup(self, text: str) -> None:
        self._seq += 1
        self._lookup(text, self._seq)

    @work(thread=True, exclusive=True, group="id-lookup")
    def _lookup(self, text: str, seq: int) -> None:
        from tracker.services.labels import handling

        try:
            view = handling.read_scan(database(self), text)
        except TrackerError as error:
            self.post_message(self.Resolved(self, None, error, seq))
            return
        self.post_message(self.Resolved(self, view, None, seq))

    def on_id_field_resolved(self, event: IdField.Resolved) -> None:
        if event.field is not self:
            return
        if event.seq != self._seq:
            event.stop()  # a stale answer: a newer lookup is on its way
            return
        self.view = event.view
        if event.error is not None:
            self._hint(f"✗ {event.error.reason}", error=True)
        elif event.view is not None:
            status = f" · {event.view.status.replace('_', ' ')}" if event.view.status else ""
            self._hint(f"✓ {event.view.id} · {event.view.what}{status}")

    def _hint(self, text: str, error: bool = False) -> None:
        hint = self.query_one(".field-hint", Static)
        hint.update(shown(text))  # what was looked up, and what the service said of it
        hint.set_class(error, "-error")
        self.set_class(error, "-invalid")
