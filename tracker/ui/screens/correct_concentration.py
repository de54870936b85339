"""Correct a concentration: a solution's element mass fraction as it should have been
recorded, with the reason.

The correction is a new, signed entry that keeps the value it replaces; the element each
aliquot of the solution loaded and the reduced results that used it follow the new value."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.core.views import Done
from tracker.services.corrections import measured_values
from tracker.ui.screens.concentration import CONFIRM_IMPLAUSIBLE, confirm_implausible_first
from tracker.ui.screens.correction import CorrectionForm
from tracker.ui.screens.form import Field


class CorrectConcentrationScreen(CorrectionForm):
    TITLE = "Correct a concentration"
    INTRO = (
        "The value in force for one element, as it should have been, with exactly one "
        "uncertainty, and why. Someone else's entry needs a manager."
    )
    FIELDS: ClassVar[list[Field]] = [
        Field("solution", "Solution", kind="id", hint="scan the solution, SO-"),
        Field("element", "Element", hint="e.g. Ca"),
        Field("value", "Mass fraction", hint="with its unit, e.g. 821 ug/g"),
        Field("relative-uncertainty-percent", "Relative uncertainty (%)", hint="e.g. 2"),
        Field("uncertainty", "Or standard uncertainty", hint="with its unit, e.g. 16 ug/g"),
        Field("method", "Method (optional)", hint="empty: as recorded"),
        Field("reason", "Reason", hint="e.g. dilution factor applied twice"),
        CONFIRM_IMPLAUSIBLE,
    ]

    def confirm_first(self, values: dict[str, Any]) -> tuple[str, str] | None:
        return confirm_implausible_first(values)

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return measured_values.correct_concentration(db, actor, values)
