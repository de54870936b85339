"""A measured element concentration for a solution (e.g. Ca by ICP-OES).

A value the dissolved powder cannot hold is refused as a likely typo; a person who has
checked it types ``yes`` in the confirmation field and is asked once more before it is
saved (as the drill form asks before an override), and the ledger records the confirmation.
"""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.bench import solutions
from tracker.services.core.views import Done
from tracker.ui.screens.form import Field, FormScreen

CONFIRM_IMPLAUSIBLE = Field(
    "confirm-implausible",
    "Confirm a value its powder cannot hold",
    hint="yes, once checked",
)

YES = ("1", "on", "t", "true", "y", "yes")  # what the request reads as true (pydantic's words)


def confirm_implausible_first(values: dict[str, Any]) -> tuple[str, str] | None:
    """The question both concentration forms ask before saving a confirmed value."""
    if str(values.get("confirm_implausible", "")).lower() not in YES:
        return None
    return (
        "Record a value its powder cannot hold?",
        f"{values.get('value', 'The value')} is kept as typed, and the ledger records under "
        "your name that you confirmed it.",
    )


class ConcentrationScreen(FormScreen):
    TITLE = "Record a concentration"
    INTRO = "The element's mass fraction in the solution, with its unit (ug/g, ppm, ng/g ...)."
    FIELDS: ClassVar[list[Field]] = [
        Field("solution", "Solution", kind="id", hint="scan the solution, SO-"),
        Field("element", "Element", hint="e.g. Ca"),
        Field("value", "Mass fraction", hint="e.g. 812 ug/g"),
        Field("relative-uncertainty-percent", "Relative uncertainty (%)", hint="e.g. 2"),
        Field("method", "Method (optional)", hint="e.g. ICP-OES"),
        CONFIRM_IMPLAUSIBLE,
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return solutions.record_concentration(db, actor, values)

    def confirm_first(self, values: dict[str, Any]) -> tuple[str, str] | None:
        return confirm_implausible_first(values)

    def after_save(self, done: Done[Any]) -> None:
        from tracker.ui.context import tracker_app

        tracker_app(self).open_id(done.item.solution, replace=True)
