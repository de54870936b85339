"""Check-in: a listed specimen arrives; scan it, note its condition and where it goes."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.core.views import Done
from tracker.services.loans import specimens
from tracker.ui.screens.form import Field, FormScreen


class CheckInScreen(FormScreen):
    TITLE = "Check in a specimen"
    INTRO = (
        "Scan the specimen's label (or type its SP- ID), describe its condition as received, "
        "scan the box or shelf it goes to, then press Ctrl+S. Its label is queued."
    )
    FIELDS: ClassVar[list[Field]] = [
        Field("specimen", "Specimen", kind="id", hint="scan the specimen, e.g. SP-00011-S"),
        Field("condition", "Condition as received", hint="e.g. complete; crown tip chipped"),
        Field("location", "Put it in (optional)", kind="location"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return specimens.check_in(db, actor, values)
