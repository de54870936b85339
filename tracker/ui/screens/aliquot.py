"""An aliquot weighed out of a solution; its element content follows from the concentration."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.bench import solutions
from tracker.services.core.views import Done
from tracker.ui.screens.form import Field, FormScreen


class AliquotScreen(FormScreen):
    TITLE = "Take an aliquot"
    INTRO = "Weigh the aliquot vial empty (tare) and filled (gross), with units."
    FIELDS: ClassVar[list[Field]] = [
        Field("solution", "Solution", kind="id", hint="scan the solution, SO-"),
        Field("tare", "Vial tare", hint="e.g. 2.00000 g"),
        Field("gross", "Vial gross", hint="e.g. 2.02500 g"),
        Field("readability", "Balance readability", value="0.01 mg"),
        Field("purpose", "Purpose", value="isotopes", hint="isotopes or archive"),
        Field("location", "Put it in (optional)", kind="location"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return solutions.take_aliquot(db, actor, values)
