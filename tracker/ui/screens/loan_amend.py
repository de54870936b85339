"""Amend a loan's terms: an extension, a new allowance, a change of what may be sampled.

Fields left empty keep their value; the new terms take effect from the day given and the
old ones stay in the history (managers only, with the lender's agreement as the reason)."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.core.views import Done
from tracker.services.loans import amendments
from tracker.ui.screens.form import Field, FormScreen


class AmendLoanScreen(FormScreen):
    TITLE = "Amend a loan's terms"
    INTRO = "Managers only. Empty fields keep the terms in force."
    FIELDS: ClassVar[list[Field]] = [
        Field("loan", "Loan", hint="its reference or LN- ID"),
        Field("kind", "Kind", hint="extension, allowance, specimens or other"),
        Field("effective-from", "Effective from", hint="YYYY-MM-DD"),
        Field("reason", "Reason", hint="e.g. lender's letter of 2026-11-20"),
        Field("due-on", "New due date (optional)", hint="YYYY-MM-DD"),
        Field("max-mass-per-specimen", "Per specimen (optional)", hint="e.g. 5 mg"),
        Field("max-total-mass", "Whole loan (optional)", hint="e.g. 40 mg"),
        Field("max-specimens-sampled", "Specimens sampled at most (optional)", hint="e.g. 8"),
        Field("permitted-tissues", "Tissues (optional)", hint="e.g. enamel, dentine"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return amendments.amend_loan(db, actor, values)
