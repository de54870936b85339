"""Return a specimen to its lender, noting its condition as it leaves."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.core.views import Done
from tracker.services.loans import specimens
from tracker.ui.screens.form import Field, FormScreen


class ReturnSpecimenScreen(FormScreen):
    TITLE = "Return a specimen"
    INTRO = "The specimen goes back to the lender: scan it and describe its condition."
    FIELDS: ClassVar[list[Field]] = [
        Field("specimen", "Specimen", kind="id", hint="scan the specimen, SP-"),
        Field("condition", "Condition at return", hint="e.g. as received; drill pit at core"),
        Field("note", "Note (optional)", hint="e.g. courier parcel 1 of 1"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return specimens.return_specimen(db, actor, values)
