"""Reprint labels: named items' labels printed again (torn, smudged, lost), with the reason.

The same print path as the labels screen's queue (:func:`tracker.output.jobs.reprint`): the
stock and start position checked first, the PDF written to a new file in the output folder
(never over another), then sent to the printer if one is named. It asks before printing;
the queue is left as it is."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.core.views import Done
from tracker.ui.context import tracker_app
from tracker.ui.screens.form import Field, FormScreen
from tracker.ui.screens.labels import DEFAULT_STOCK, printed_line, start_position


class ReprintLabelsScreen(FormScreen):
    TITLE = "Reprint labels"
    INTRO = "Items whose labels are printed again, and why; the queue stays as it is."
    FIELDS: ClassVar[list[Field]] = [
        Field("items", "Items", kind="ids", hint="scan each, or type IDs with commas"),
        Field("reason", "Reason", hint="e.g. label smudged by acid"),
        Field("stock", "Label stock", value=DEFAULT_STOCK, hint="as on the labels screen (F5)"),
        Field("start", "First free position", value="1", hint="1 = top left, by rows"),
        Field("printer", "Printer (optional)", hint="empty: a PDF in the output folder"),
    ]

    def service(self, db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        """Print through the labels screen's path; the answer is the job, as a ``Done``."""
        from tracker.output import jobs

        outcome = jobs.reprint(
            db,
            actor,
            items=values.get("items", []),
            reason=str(values.get("reason", "")),
            stock=str(values.get("stock", "")),
            start=start_position(str(values.get("start", "1"))),
            printer=values.get("printer"),
            folder=tracker_app(self).out_dir,
        )
        return Done(item=outcome, event_seq=outcome.event_seq, event_hash=outcome.event_hash)

    def confirm_first(self, values: dict[str, Any]) -> tuple[str, str] | None:
        items = values.get("items", [])
        if not items:
            return None  # nothing to ask about: the service says what is missing
        where = f"to the printer {values['printer']}" if values.get("printer") else "to a PDF"
        return (
            f"Reprint {len(items)} label(s) {where}?",
            f"{', '.join(items)} on {values.get('stock', '?')}, from "
            f"position {values.get('start', '1')}; the reprint and its reason are signed "
            "in the ledger under your name.",
        )

    def after_save(self, done: Done[Any]) -> None:
        """Stay, with the job and its new file; Esc goes back (to the queue, if from there)."""
        self.show_outcome(printed_line(done.item), error=False)
