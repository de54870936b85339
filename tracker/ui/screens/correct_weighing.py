"""Correct a weighing: a powder, a solution's vial or an aliquot weighed again, with the reason.

Nothing is edited in place: the correction is a new, signed entry that keeps the old value,
and every total, load and reduced result that used the old mass follows the new one."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.core.views import Done
from tracker.services.corrections import weighings
from tracker.ui.screens.correction import CorrectionForm
from tracker.ui.screens.form import Field


class CorrectWeighingScreen(CorrectionForm):
    TITLE = "Correct a weighing"
    INTRO = (
        "The tare and gross as they should have been recorded, and why. Someone else's entry "
        "needs a manager; the old value stays in the history."
    )
    FIELDS: ClassVar[list[Field]] = [
        Field("item", "Powder, solution or aliquot", kind="id", hint="scan its vial"),
        Field("tare", "Vial tare", hint="with its unit, e.g. 1203.557 mg"),
        Field("gross", "Vial gross", hint="e.g. 1206.118 mg"),
        Field("readability", "Balance readability (optional)", hint="empty: as first weighed"),
        Field("reason", "Reason", hint="e.g. gross read from the wrong line of the log"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return weighings.correct_weighing(db, actor, values)
