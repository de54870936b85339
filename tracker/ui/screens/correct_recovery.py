"""Correct a column recovery: the element recovered in a cut as it should have been
recorded, with the reason.

The correction is a new, signed entry that keeps the value it replaces; yields, blank shares
and the reduced results of sessions that measured the batch follow the new value."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.core.views import Done
from tracker.services.corrections import measured_values
from tracker.ui.screens.correction import CorrectionForm
from tracker.ui.screens.form import Field


class CorrectRecoveryScreen(CorrectionForm):
    TITLE = "Correct a column recovery"
    INTRO = (
        "The element recovered in a cut, as it should have been, and why. Someone else's "
        "entry needs a manager; the old value stays in the history."
    )
    FIELDS: ClassVar[list[Field]] = [
        Field("cut", "Cut", kind="id", hint="scan the cut, CU-"),
        Field("recovered", "Element recovered", hint="with its unit, e.g. 9.91 ug"),
        Field("relative-uncertainty-percent", "Relative uncertainty (%)", hint="e.g. 1.5"),
        Field("uncertainty", "Or standard uncertainty", hint="with its unit, e.g. 0.15 ug"),
        Field("reason", "Reason", hint="e.g. sequence row swapped with the blank"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return measured_values.correct_recovery(db, actor, values)
