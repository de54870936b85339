"""The column batch's forms: open a batch, put a reference material on a column, record a
cut, remove a column scanned by mistake."""

from __future__ import annotations

from datetime import date
from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.present.lab import position_removed
from tracker.services.bench import chemistry, columns
from tracker.services.core.views import Done
from tracker.ui.context import tracker_app
from tracker.ui.screens.form import Field, FormScreen


class NewBatchScreen(FormScreen):
    TITLE = "Open a column batch"
    INTRO = "Cut names in elution order, separated by commas; the element's cut is named like it."
    FIELDS: ClassVar[list[Field]] = [
        Field("name", "Batch name", hint="e.g. Ca 2026-12 A"),
        Field("performed-on", "Performed on", value=date.today().isoformat()),
        Field("element", "Element", value="Ca"),
        Field("resin", "Resin", hint="e.g. DGA resin, 50-100 um, 0.25 mL"),
        Field("elution-scheme", "Elution scheme", hint="e.g. load 3 M HNO3; elute Ca 0.05 M"),
        Field("cut-names", "Cuts", value="matrix,Ca"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return chemistry.create_batch(db, actor, values)


class ReferencePositionScreen(FormScreen):
    TITLE = "Add a reference material column"
    INTRO = "The reference material by name (or RM- ID) and the element loaded on the column."
    FIELDS: ClassVar[list[Field]] = [
        Field("batch", "Batch", kind="id"),
        Field("reference-material", "Reference material", hint="e.g. SRM 915b"),
        Field("loaded-ug", "Element loaded (µg)", hint="e.g. 10.0"),
        Field("loaded-u-ug", "Its uncertainty (µg)", hint="e.g. 0.05"),
    ]

    def values(self) -> dict[str, Any]:
        return {**super().values(), "kind": "reference"}

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return chemistry.add_position(db, actor, values)

    def after_save(self, done: Done[Any]) -> None:
        tracker_app(self).pop_screen()


class CutScreen(FormScreen):
    TITLE = "Record a cut's recovery"
    INTRO = (
        "What the column's cut recovered, with its unit (10.31 ug). The yield and blank share "
        "are computed and flagged against the batch's limits."
    )
    FIELDS: ClassVar[list[Field]] = [
        Field("position", "Column position", kind="id", hint="scan the column position CP-"),
        Field("cut", "Cut", hint="e.g. Ca"),
        Field("recovered", "Recovered element", hint="e.g. 10.31 ug"),
        Field("relative-uncertainty-percent", "Relative uncertainty (%)", value="1.5"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return columns.record_cut(db, actor, values)

    def after_save(self, done: Done[Any]) -> None:
        tracker_app(self).pop_screen()


class RemovePositionScreen(FormScreen):
    TITLE = "Remove a column from its batch"
    INTRO = (
        "For a column scanned by mistake, before any cut is collected from it. It stays on "
        "record as removed, with your reason; its slot takes the next column added and its "
        "aliquot is available again."
    )
    FIELDS: ClassVar[list[Field]] = [
        Field("position", "Column position", kind="id", hint="scan the column position CP-"),
        Field("reason", "Reason", hint="e.g. scanned the neighbouring tube by mistake"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return chemistry.remove_position(db, actor, values)

    def confirm_first(self, values: dict[str, Any]) -> tuple[str, str] | None:
        position = values.get("position", "this column")
        return (
            f"Remove {position} from its batch?",
            "The removal and its reason are signed in the ledger under your name and cannot "
            "be taken back; the column stays on record as removed.",
        )

    def after_save(self, done: Done[Any]) -> None:
        """Back to the batch, which shows the column gone; the notice says what changed."""
        tracker_app(self).tell(position_removed(done.item), title="Column removed")
        tracker_app(self).pop_screen()
