"""Dissolution: all or part of a powder into acid, the solution weighed by difference."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.bench import solutions
from tracker.services.core.views import Done
from tracker.ui.screens.form import Field, FormScreen


class DissolveScreen(FormScreen):
    TITLE = "Dissolve a powder"
    INTRO = (
        "Masses with their unit. Leave 'powder taken' empty to dissolve all that remains. "
        "Caution: concentrated acids (and HF) — follow your institution's chemical-hygiene "
        "plan; tracker records the work, it is not a safety authority."
    )
    FIELDS: ClassVar[list[Field]] = [
        Field("powder", "Powder", kind="id", hint="scan the powder vial, PW-"),
        Field("acid", "Acid", hint="e.g. 2 M HNO3"),
        Field("vial-tare", "Vial tare", hint="e.g. 5.1234 g"),
        Field("vial-gross", "Vial gross (with solution)", hint="e.g. 6.1234 g"),
        Field("readability", "Balance readability", value="0.1 mg"),
        Field("powder-taken", "Powder taken (empty: all)", hint="e.g. 2.015 mg"),
        Field("location", "Put it in (optional)", kind="location"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return solutions.dissolve(db, actor, values)
