"""Attach a document to a loan: its agreement, an amendment, a letter, a photograph.

The file is read by the save worker and kept once, by its SHA-256; the loan's terms tab
lists it. A path that names no readable file is refused in one line naming it."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.db.uploads import read_typed_path
from tracker.services.core.views import Done
from tracker.services.loans import amendments
from tracker.ui.screens.form import Field, FormScreen


class AttachDocumentScreen(FormScreen):
    TITLE = "Attach a document to a loan"
    INTRO = "Any file the loan rests on; it is kept whole and named by its SHA-256."
    FIELDS: ClassVar[list[Field]] = [
        Field("loan", "Loan", hint="its reference or LN- ID"),
        Field("document", "File (path)", hint="e.g. ~/loans/agreement-signed.pdf"),
        Field("role", "Role", hint="agreement, amendment, correspondence, photo or other"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        typed = str(values.get("document", ""))
        document = read_typed_path(typed, "document", "type the path of the file to keep")
        return amendments.attach_document(db, actor, values | {"document": document})

    def after_save(self, done: Done[Any]) -> None:
        """Stay: the line says what was kept (a loan document has no screen of its own)."""
        item = done.item
        self.show_outcome(
            f"✓ {item.filename} kept as {item.role} · sha256 {item.sha256[:16]}… · "
            f"ledger event #{done.event_seq}",
            error=False,
        )
