"""Choose the Sr reference curve a loan's specimens are screened against (the same service
as ``tracker loan curve``): one of the curves the lab has stored, never a typed name."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.core.views import Done
from tracker.services.instrument import screening
from tracker.ui.context import tracker_app
from tracker.ui.screens.form import Field, FormScreen


class ChooseCurveScreen(FormScreen):
    TITLE = "Screen a loan against a Sr curve"
    INTRO = (
        "Each specimen's measured ⁸⁷Sr/⁸⁶Sr is set beside what the curve expects at its "
        "stated age. A curve is stored once from its file (tracker curve add)."
    )
    FIELDS: ClassVar[list[Field]] = [
        Field("loan", "Loan", hint="its reference or LN- ID"),
        Field("curve", "Curve", kind="choice", hint="one of the stored curves"),
    ]

    @staticmethod
    def choices(db: Database) -> dict[str, list[str]]:
        return {"curve": [curve.name for curve in screening.list_curves(db)]}

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return screening.use_curve(db, actor, values)

    def after_save(self, done: Done[Any]) -> None:
        """Back to the loan when it was opened from there (it reads its screening again),
        else the loan opens in place of the form."""
        from tracker.ui.screens.loan import LoanScreen

        app = tracker_app(self)
        if isinstance(app.screen_stack[-2], LoanScreen):
            app.pop_screen()
        else:
            app.open_id(done.item.id, replace=True)
