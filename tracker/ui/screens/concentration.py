"""A measured element concentration for a solution (e.g. Ca by ICP-OES)."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.bench import solutions
from tracker.services.core.views import Done
from tracker.ui.screens.form import Field, FormScreen


class ConcentrationScreen(FormScreen):
    TITLE = "Record a concentration"
    INTRO = "The element's mass fraction in the solution, with its unit (ug/g, ppm, ng/g ...)."
    FIELDS: ClassVar[list[Field]] = [
        Field("solution", "Solution", kind="id", hint="scan the solution, SO-"),
        Field("element", "Element", hint="e.g. Ca"),
        Field("value", "Mass fraction", hint="e.g. 812 ug/g"),
        Field("relative-uncertainty-percent", "Relative uncertainty (%)", hint="e.g. 2"),
        Field("method", "Method (optional)", hint="e.g. ICP-OES"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return solutions.record_concentration(db, actor, values)

    def after_save(self, done: Done[Any]) -> None:
        from tracker.ui.context import tracker_app

        tracker_app(self).open_id(done.item.solution, replace=True)
