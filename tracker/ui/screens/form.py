"""The shape every bench form shares: labelled fields, a live preview, one save key.

Saving calls one service in a thread worker with exactly what was typed (text with units,
IDs as scanned) and shows its answer: ✓ and the ledger event, or the service's own one-line
refusal under the form, with the blamed field focused. The form decides nothing itself.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, ClassVar

from rich.text import Text
from textual import work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, VerticalScroll
from textual.message import Message
from textual.screen import Screen
from textual.widgets import Footer, Input, Select, Static

from tracker.db.database import Database
from tracker.domain.errors import TrackerError
from tracker.services.core.views import Done
from tracker.ui.context import database, operator, tracker_app
from tracker.ui.messages import Refused, refusal_text
from tracker.ui.plain import shown
from tracker.ui.screens.confirm import ConfirmScreen
from tracker.ui.widgets.field_label import FieldLabel
from tracker.ui.widgets.id_field import IdField, IdInput, IdListInput
from tracker.ui.widgets.operator_bar import OperatorBar
from tracker.ui.widgets.outcome import show_outcome

Service = Callable[[Database, str | None, dict[str, Any]], Done[Any]]


@dataclass(frozen=True)
class Field:
    """One input of a form, named as the service names it."""

    name: str
    label: str
    kind: str = "text"  # "id", "ids" (several, each scan added), "location" or "choice"
    hint: str = ""  # an example or how to fill it, shown beside the label (never in the field)
    value: str = ""
    manager_only: bool = False


class FormScreen(Screen[None]):
    """Base of the bench forms; subclasses give TITLE, INTRO, FIELDS and ``service``."""

    TITLE: ClassVar[str] = "Form"
    INTRO: ClassVar[str] = ""
    FIELDS: ClassVar[list[Field]] = []
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("ctrl+s", "save", "Save", id="form.save", priority=True),
        Binding("escape", "app.previous", "Back", id="form.back"),
    ]

    class Saved(Message):
        def __init__(self, done: Done[Any]) -> None:
            super().__init__()
            self.done = done

    class Offered(Message):
        """What each choice field offers, read from the database."""

        def __init__(self, offered: dict[str, list[str]]) -> None:
            super().__init__()
            self.offered = offered

    def __init__(self, **values: str) -> None:
        super().__init__()
        self.initial = values
        self.last_done: Done[Any] | None = None

    def service(self, db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        """The one service call (run in the save worker); most forms need no ``self``."""
        raise NotImplementedError

    def compose(self) -> ComposeResult:
        yield OperatorBar(self.TITLE)
        with VerticalScroll(id="form"):
            if self.INTRO:
                yield Static(self.INTRO, classes="intro")
            for spec in self.FIELDS:
                yield from self.compose_field(spec)
        yield Static("", id="preview")  # outside the scroll: always in sight while typing
        yield Static("", id="outcome")
        yield Footer(compact=True)

    @staticmethod
    def choices(db: Database) -> dict[str, list[str]]:
        """What each choice field offers, by field name: a read service, called in a worker
        (none by default). A person picks one; nothing outside the list can be given."""
        return {}

    def compose_field(self, spec: Field) -> ComposeResult:
        value = self.initial.get(spec.name, spec.value)
        if spec.kind in ("id", "location"):
            yield IdField(
                spec.label,
                name=spec.name,
                value=value,
                hint=spec.hint or ("scan it, or type its name" if spec.kind == "location" else ""),
                offers_locations=spec.kind == "location",
            )
            return
        if spec.kind == "choice":
            yield FieldLabel(spec.label, spec.hint, "")
            yield Select[str]([], prompt="reading …", id=f"f-{spec.name}", classes="field")
            return
        locked = spec.manager_only and not tracker_app(self).is_manager
        note = "🔒 managers only" if spec.manager_only else ""
        if locked:
            note = f"🔒 locked: {tracker_app(self).operator} is not a manager"
        with Horizontal(classes="field-row"):
            yield FieldLabel(spec.label, "" if locked else spec.hint, note)
            box = IdListInput if spec.kind == "ids" else Input
            yield box(value, id=f"f-{spec.name}", disabled=locked, classes="field", compact=True)

    def on_mount(self) -> None:
        first_empty = next((i for i in self.query(Input) if not i.value and not i.disabled), None)
        choice = self.query(Select).first() if self.query(Select) else None
        (first_empty or choice or self.query(Input).first()).focus()
        if choice is not None:
            self.offer_choices()

    @work(thread=True, exclusive=True, group="choices")
    def offer_choices(self) -> None:
        try:
            offered = self.choices(database(self))
        except TrackerError as error:
            self.post_message(Refused(error, "choices"))
            return
        self.post_message(self.Offered(offered))

    def on_form_screen_offered(self, event: FormScreen.Offered) -> None:
        """Each choice field's options; what the form was opened with stays chosen."""
        event.stop()
        for name, options in event.offered.items():
            select: Select[str] = self.query_one(f"#f-{name}", Select)
            select.set_options((shown(option), option) for option in options)
            select.prompt = "choose one (Enter)" if options else "nothing to choose yet"
            if self.initial.get(name) in options:
                select.value = self.initial[name]

    def values(self) -> dict[str, Any]:
        """What was typed or chosen, by service field name; empty fields are left out, and a
        field of several IDs is their list."""
        typed: dict[str, Any] = {}
        for spec in self.FIELDS:
            if spec.kind == "choice":
                select: Select[str] = self.query_one(f"#f-{spec.name}", Select)
                text = "" if select.is_blank() else str(select.value)
            else:
                text = self.query_one(f"#f-{spec.name}", Input).value.strip()
            if text:
                name = spec.name.replace("-", "_")
                typed[name] = IdListInput.ids(text) if spec.kind == "ids" else text
        return typed

    def action_save(self) -> None:
        values = self.values()
        question = self.confirm_first(values)
        if question is None:
            self._start_save(values)
            return

        def answered(yes: bool | None) -> None:
            if yes:
                self._start_save(values)
            else:
                self.show_outcome("nothing saved", error=False)

        tracker_app(self).push_screen(ConfirmScreen(*question), answered)

    def confirm_first(self, values: dict[str, Any]) -> tuple[str, str] | None:
        """A question to ask before saving these values, for a step that cannot be taken
        back (its question and detail); None saves at once."""
        return None

    def _start_save(self, values: dict[str, Any]) -> None:
        self.show_outcome("… saving", error=False)
        self.save(values)

    @work(thread=True, exclusive=True, group="save")
    def save(self, values: dict[str, Any]) -> None:
        try:
            done = self.service(database(self), operator(self), values)
        except TrackerError as error:
            self.post_message(Refused(error, "save"))
            return
        self.post_message(self.Saved(done))

    def on_refused(self, event: Refused) -> None:
        event.stop()
        self.show_outcome(refusal_text(event.error), error=True)
        name = event.error.field.replace("_", "-")
        for candidate in (name, name.split(".")[-1]):
            found = self.query(f"#f-{candidate}")
            if found:
                found.first().focus()
                break

    def on_form_screen_saved(self, event: FormScreen.Saved) -> None:
        event.stop()
        self.last_done = event.done
        item = getattr(event.done.item, "id", None)
        what = f"✓ saved {item}" if item else "✓ saved"
        self.show_outcome(f"{what} · ledger event #{event.done.event_seq}", error=False)
        tracker_app(self).tell(f"{what}: {self.TITLE.lower()}", title="Saved")
        self.after_save(event.done)

    def after_save(self, done: Done[Any]) -> None:
        """Default: open what was made (or changed), replacing the form."""
        item = getattr(done.item, "id", None)
        if item:
            tracker_app(self).open_id(item, replace=True)

    def show_outcome(self, text: str | Text, *, error: bool) -> None:
        show_outcome(self.query_one("#outcome", Static), text, error=error)

    def on_input_changed(self, event: Input.Changed | Select.Changed) -> None:
        """A refusal speaks of what was typed then: once a field changes it is cleared,
        so that nothing on screen speaks of a state that has passed."""
        outcome = self.query_one("#outcome", Static)
        if outcome.has_class("-error"):
            show_outcome(outcome, "", error=False)

    def on_select_changed(self, event: Select.Changed) -> None:
        self.on_input_changed(event)

    def on_id_field_scanned(self, event: IdField.Scanned) -> None:
        """A scan into this form's ID field moves on to the next field to fill."""
        event.stop()
        self.focus_after(event.field.input)

    def focus_after(self, field: Input) -> None:
        """Focus the first empty field after ``field`` (a person types on where they look)."""
        inputs = [i for i in self.query(Input) if not i.disabled]
        try:
            index = inputs.index(field)
        except ValueError:
            return
        for following in inputs[index + 1 :]:
            if not following.value:
                following.focus()
                return

    def auto_fill(self, field: Input, value: str) -> None:
        """Fill ``field`` for the person; if the cursor waits in it, move it on to the next
        empty field, so that the next keystroke never lands after the filled-in text."""
        field.value = value
        if field.has_focus:
            self.focus_after(field)

    def id_input(self, name: str) -> IdInput:
        return self.query_one(f"#f-{name}", IdInput)
