"""What became of a vial: powder or solution returned to the lender, destroyed, retained or
used up, with what was left in it weighed as it leaves."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.bench import custody
from tracker.services.core.views import Done
from tracker.ui.screens.form import Field, FormScreen


class DisposeScreen(FormScreen):
    TITLE = "Return or dispose of a vial"
    INTRO = (
        "Weigh the vial as it leaves (tare and gross) so the books close. Returned powder "
        "travels in an outgoing shipment. Caution: dispose of acid solutions as your "
        "institution's chemical-waste rules require."
    )
    FIELDS: ClassVar[list[Field]] = [
        Field("item", "Powder or solution", kind="id", hint="scan its vial"),
        Field("outcome", "Outcome", hint="returned, destroyed, retained or consumed"),
        Field("reason", "Reason", hint="e.g. unused powder back to the lender"),
        Field("permission", "Lender's consent (optional)", hint="e.g. letter of 2026-11-02"),
        Field("shipment", "Shipment (returned vials)", kind="id", hint="scan or type SH-"),
        Field("residual-tare", "Vial tare (optional)", hint="e.g. 1203.557 mg"),
        Field("residual-gross", "Vial gross as it leaves (optional)", hint="e.g. 1204.101 mg"),
        Field("readability", "Balance readability (optional)", hint="e.g. 0.001 mg"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return custody.dispose(db, actor, values)
