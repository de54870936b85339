"""Import an instrument export through a saved column-mapping profile."""

from __future__ import annotations

from typing import Any, ClassVar

from textual import work
from textual.message import Message
from textual.widgets import Static

from tracker.db.database import Database
from tracker.db.uploads import read_typed_path
from tracker.services.core.views import Done
from tracker.services.instrument import sessions
from tracker.services.instrument.sessions import ProfileView
from tracker.ui.context import database
from tracker.ui.plain import shown
from tracker.ui.screens.form import Field, FormScreen


class ImportSessionScreen(FormScreen):
    TITLE = "Import an instrument session"
    INTRO = "The export file (CSV, TSV or XLSX) is read through a saved profile."
    FIELDS: ClassVar[list[Field]] = [
        Field("file", "Export file (path)", hint="e.g. /data/run-2026-12-01.csv"),
        Field("profile", "Mapping profile", hint="e.g. mc-ca"),
        Field("name", "Session name", hint="e.g. Ca 2026-12-01"),
        Field("instrument", "Instrument", hint="e.g. MC-ICP-MS 2"),
        Field("element", "Element", value="Ca"),
        Field("bracketing-standard", "Bracketing standard", hint="e.g. SRM 915a"),
    ]

    class Profiles(Message):
        def __init__(self, profiles: list[ProfileView]) -> None:
            super().__init__()
            self.profiles = profiles

    def on_mount(self) -> None:
        super().on_mount()
        self.list_profiles()

    @work(thread=True, exclusive=True, group="load")
    def list_profiles(self) -> None:
        self.post_message(self.Profiles(sessions.list_profiles(database(self))))

    def on_import_session_screen_profiles(self, event: Profiles) -> None:
        names = ", ".join(p.name for p in event.profiles) or "none saved yet"
        self.query_one(".intro", Static).update(shown(f"{self.INTRO}\nSaved profiles: {names}"))

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        request = dict(values)
        typed = str(request.pop("file", ""))
        request |= read_typed_path(typed, "file", "type the path of the instrument's export")
        return sessions.import_session(db, actor, request)
