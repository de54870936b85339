"""Mark a loan returned: every specimen of it has gone back to the lender."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.bench import custody
from tracker.services.core.views import Done
from tracker.ui.screens.form import Field, FormScreen


class MarkReturnedScreen(FormScreen):
    TITLE = "Mark a loan returned"
    INTRO = "Every specimen of the loan has gone back to the lender."
    FIELDS: ClassVar[list[Field]] = [
        Field("loan", "Loan", hint="its reference or LN- ID"),
        Field("returned-on", "Returned on (optional)", hint="YYYY-MM-DD; empty: today"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return custody.mark_loan_returned(db, actor, values)
