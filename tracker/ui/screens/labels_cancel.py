"""Cancel queued labels: the items were mis-scanned or their vials will never be made."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.core.views import Done
from tracker.services.labels import handling
from tracker.ui.screens.form import Field, FormScreen


class CancelLabelsScreen(FormScreen):
    TITLE = "Cancel queued labels"
    INTRO = "The items whose queued labels will not be printed, and why."
    FIELDS: ClassVar[list[Field]] = [
        Field("items", "Items", kind="ids", hint="scan each, or type IDs separated by commas"),
        Field("reason", "Reason", hint="e.g. scanned twice by mistake"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return handling.cancel_labels(db, actor, values)

    def after_save(self, done: Done[Any]) -> None:
        self.app.pop_screen()  # back to the queue, which reloads
