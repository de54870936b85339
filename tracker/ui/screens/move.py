"""Move a specimen or vial to another place; the ledger keeps both places."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.bench import custody
from tracker.services.core.views import Done
from tracker.ui.screens.form import Field, FormScreen


class MoveScreen(FormScreen):
    TITLE = "Move an item"
    INTRO = "Scan the item, then the place it goes to."
    FIELDS: ClassVar[list[Field]] = [
        Field("item", "Item", kind="id", hint="scan a specimen or vial"),
        Field("to", "Move to", kind="location"),
        Field("note", "Note (optional)"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return custody.move(db, actor, values)
