"""Where a key goes before any widget sees it: a scanner's burst, a person's typing, a shortcut.

Keys typed into a text field go to the field. Printable keys that arrive while no field has
the focus are held back until it is clear what they are:

- a burst ended by Enter, a few milliseconds per key, is a barcode scan
  (:class:`~tracker.ui.scan.BurstDetector`): it fills nothing by accident and finds the item;
- a single key with no other after it for :data:`~tracker.ui.scan.TYPING_GAP` is a shortcut
  (``d`` opens the drill form), let through to the bindings;
- two or more keys in a row are text a person typed: they never fire shortcuts (typing a
  path once stacked six forms). Enter finds what was typed — an ID, a specimen's catalogue
  number, a loan's reference — and Esc or any other key drops it.

A key clicked in the footer runs its action; it is never typed into the focused field.
"""

from __future__ import annotations

import time

from textual import events
from textual.app import App
from textual.command import CommandPalette
from textual.reactive import reactive
from textual.timer import Timer
from textual.widgets import Input

from tracker.ui.scan import BurstDetector, TypedRun
from tracker.ui.widgets.id_field import IdInput


class KeyRouting(App[None]):
    """The app's key routing; the app says what finding a scanned or typed text does."""

    status_line: reactive[str] = reactive("")

    def __init__(self) -> None:
        super().__init__()
        self._last_input = time.monotonic()  # the idle lock counts from here
        self._burst = BurstDetector()
        self._run = TypedRun[events.Key]()
        self._run_timer: Timer | None = None
        self._typed_before: tuple[Input, str] | None = None

    @property
    def keys_pending(self) -> bool:
        """Keys are held back, waiting to be told apart (tests wait for this to clear)."""
        return bool(self._run.keys) and not self._run.is_text

    def routes_keys(self) -> bool:
        """Whether keys are routed at all (the app routes none before an operator is set)."""
        return True

    def find_text(self, text: str) -> None:
        """Find what a scanner or a person typed outside any field (the app opens it)."""

    def simulate_key(self, key: str) -> None:
        """A key clicked in the footer: run what it is bound to without sending the key, so
        a click never types its letter into the field that has the focus."""
        active = self.screen.active_bindings.get(key)
        if active is None or not active.enabled:
            self.bell()
            return
        self.call_later(self.run_action, active.binding.action, active.node)

    async def on_event(self, event: events.Event) -> None:
        if isinstance(event, events.Key | events.MouseDown):
            self._last_input = time.monotonic()
        if (
            isinstance(event, events.Key)
            and not event.is_forwarded
            and self.routes_keys()
            and not isinstance(self.screen, CommandPalette)
            and await self._route(event)
        ):
            return
        await super().on_event(event)

    async def _route(self, event: events.Key) -> bool:
        """True when the key was taken here (held back, or the Enter that ends a scan)."""
        focused = self.focused
        char = event.character
        printable = event.is_printable and char is not None and len(char) == 1
        if printable and (event.key != "space" or self._run.keys):
            assert char is not None
            return await self._printable(event, char, focused)
        if event.key == "enter":
            return await self._enter(event, focused)
        if event.key == "escape" and self._run.is_text:
            self._drop_text()
            return True
        self._burst.reset()
        await self._release()
        return False

    async def _printable(self, event: events.Key, char: str, focused: object) -> bool:
        continues = self._burst.feed(char, event.time)
        if isinstance(focused, Input):
            if not continues:
                self._typed_before = (focused, focused.value)
            return False
        if not self._run.continues(event.time):
            await self._release()  # a shortcut typed a while ago, then this key
        self._run.add(event, char, event.time)
        if self._run.is_text:
            self.status_line = f"typed {self._run.text!r}: Enter finds it, Esc drops it"
        self._restart_timer()
        return True

    async def _enter(self, event: events.Key, focused: object) -> bool:
        scanned = self._burst.enter(event.time)
        self._stop_timer()
        if scanned is not None:
            self._run.clear()
            self._scanned(scanned, focused)
            return True
        if self._run.is_text:
            text = self._run.text
            self._run.clear()
            self.status_line = f"finding {text.strip()} …"
            self.find_text(text)
            return True
        await self._release()
        return False

    def _restart_timer(self) -> None:
        self._stop_timer()
        self._run_timer = self.set_timer(self._run.gap, self._run_ended)

    def _stop_timer(self) -> None:
        if self._run_timer is not None:
            self._run_timer.stop()
            self._run_timer = None

    async def _run_ended(self) -> None:
        """No key for a while: a lone key is a shortcut; typed text waits for Enter."""
        if not self._run.is_text:
            await self._release()

    async def _release(self) -> None:
        """Let a held lone key through to the bindings; typed text is dropped, never
        replayed as shortcuts."""
        if self._run.is_text:
            self._drop_text()
            return
        keys = self._run.clear()
        if keys:
            self._burst.reset()
        for key in keys:
            await super().on_event(key)

    def _drop_text(self) -> None:
        self._run.clear()
        self._burst.reset()
        self.status_line = ""

    def _scanned(self, text: str, focused: object) -> None:
        if isinstance(focused, Input):
            # The text box still has the scanned keys in its queue: act after it took them.
            focused.call_later(self._finish_scan, text, focused)
            return
        self._finish_scan(text, focused)

    def _finish_scan(self, text: str, focused: object) -> None:
        if self._typed_before is not None and isinstance(focused, Input):
            field, before = self._typed_before
            if field is focused:
                field.value = before  # the scan's characters do not stay in a text box
        self._typed_before = None
        if isinstance(focused, IdInput):
            focused.fill_from_scan(text)
            self.status_line = f"scanned {text.strip()} into the field"
            return
        self.status_line = f"scanned {text.strip()} …"
        self.find_text(text)
