"""Attach a photograph of a specimen's condition, as it arrived, as it leaves or otherwise.

The file is read by the save worker and kept once, by its SHA-256; the return report shows
it to the lender. A path that names no readable file is refused in one line naming it."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.db.uploads import read_typed_path
from tracker.services.core.views import Done
from tracker.services.loans import shipments
from tracker.ui.context import tracker_app
from tracker.ui.screens.form import Field, FormScreen


class SpecimenPhotoScreen(FormScreen):
    TITLE = "Attach a specimen photo"
    INTRO = "A JPEG, PNG, TIFF or WebP file showing the specimen's condition."
    FIELDS: ClassVar[list[Field]] = [
        Field("specimen", "Specimen", kind="id", hint="scan it, or its catalogue number"),
        Field("photo", "Photo file (path)", hint="e.g. ~/photos/crown-front.jpg"),
        Field("stage", "Stage", value="receipt", hint="receipt, return or other"),
        Field("caption", "Caption (optional)", hint="e.g. crown, labial view"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        typed = str(values.get("photo", ""))
        photo = read_typed_path(typed, "photo", "type the path of the photograph")
        return shipments.add_photo(db, actor, values | {"photo": photo})

    def after_save(self, done: Done[Any]) -> None:
        tracker_app(self).open_id(done.item.specimen, replace=True)
