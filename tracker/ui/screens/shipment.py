"""A parcel for a loan: specimens arriving from the lender, or going back with their powder."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.core.views import Done
from tracker.services.loans import shipments
from tracker.ui.screens.form import Field, FormScreen


class ShipmentScreen(FormScreen):
    TITLE = "Record a shipment"
    INTRO = "The loan it belongs to, which way it travels, and how it can be traced."
    FIELDS: ClassVar[list[Field]] = [
        Field("loan", "Loan", hint="its reference or LN- ID"),
        Field("direction", "Direction", hint="incoming or outgoing"),
        Field("shipped-on", "Shipped on", hint="YYYY-MM-DD"),
        Field("carrier", "Carrier (optional)", hint="e.g. Imaginary Couriers"),
        Field("tracking", "Tracking number (optional)"),
        Field("notes", "Notes (optional)"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return shipments.add_shipment(db, actor, values)
