"""Close a loan: a manager says the lab's obligations are met; its terms can no longer be
amended afterwards."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.bench import custody
from tracker.services.core.views import Done
from tracker.ui.screens.form import Field, FormScreen


class CloseLoanScreen(FormScreen):
    TITLE = "Close a loan"
    INTRO = (
        "Managers only. The material is back and what was left of it has been dealt with as "
        "the terms require."
    )
    FIELDS: ClassVar[list[Field]] = [
        Field("loan", "Loan", hint="its reference or LN- ID"),
        Field("reason", "Reason", hint="e.g. all powder returned, results reported"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return custody.close_loan(db, actor, values)

    def confirm_first(self, values: dict[str, Any]) -> tuple[str, str] | None:
        loan = values.get("loan", "the loan")
        return (
            f"Close {loan}?",
            "A closed loan's terms can no longer be amended; the closing is signed in the "
            "ledger under your name.",
        )
