"""The passphrase, asked once when an operator is chosen (and again after the idle lock).

What is typed is hidden; a worker opens the key file with it through the same service the
command line uses (:func:`tracker.services.admin.keys.unlock_file`), and a wrong passphrase is
said under the field so it can be typed again. Escape goes on without the key: screens
that only read still work, and anything that records is refused in one line until the key
is unlocked (Ctrl+O chooses the operator again, which asks again).
"""

from __future__ import annotations

from typing import TYPE_CHECKING, ClassVar

from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Vertical
from textual.message import Message
from textual.screen import ModalScreen
from textual.widgets import Footer, Input, Static

from tracker.domain.errors import TrackerError
from tracker.ui.plain import shown

if TYPE_CHECKING:
    from tracker.db.database import Database
    from tracker.db.keyfiles import KeyFile


class PassphraseScreen(ModalScreen[bool]):
    """Dismisses with True once the key is unlocked, False when the person goes on without."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "skip", "Go on without signing", id="passphrase.skip"),
    ]

    class Refused(Message):
        def __init__(self, line: str) -> None:
            super().__init__()
            self.line = line

    def __init__(self, db: Database, key_file: KeyFile, why: str = "") -> None:
        super().__init__()
        self.db, self.key_file, self.why = db, key_file, why

    def compose(self) -> ComposeResult:
        owner, key = self.key_file.operator, self.key_file.key_id
        with Vertical(id="passphrase-box"):
            yield Static(shown(f"Unlock {owner}'s signing key"), classes="box-title")
            yield Static(
                shown(
                    (f"{self.why} " if self.why else "")
                    + f"Every event {owner} records is signed with key {key}. Type its "
                    "passphrase: the key stays unlocked in memory only, until the idle lock."
                ),
                classes="intro",
            )
            yield Input(password=True, placeholder="passphrase", id="passphrase")
            yield Static("", id="passphrase-problem")
        yield Footer(compact=True)

    def on_mount(self) -> None:
        self.query_one("#passphrase", Input).focus()

    @on(Input.Submitted, "#passphrase")
    def _typed(self, event: Input.Submitted) -> None:
        self.unlock(event.value)

    @work(thread=True, exclusive=True, group="unlock")
    def unlock(self, passphrase: str) -> None:
        from tracker.services.admin import keys

        try:
            keys.unlock_file(self.db, self.key_file, passphrase)
        except TrackerError as error:
            self.post_message(self.Refused(error.one_line()))
            return
        self.app.call_from_thread(self.dismiss, True)

    def on_passphrase_screen_refused(self, event: Refused) -> None:
        self.query_one("#passphrase-problem", Static).update(shown(f"✗ {event.line}"))
        field = self.query_one("#passphrase", Input)
        field.value = ""
        field.focus()

    def action_skip(self) -> None:
        self.dismiss(False)
