"""Saying what an unmatched row of an instrument session measured: the session and run come
prefilled from the session screen's Unmatched tab, the cut is scanned or typed."""

from __future__ import annotations

from typing import Any, ClassVar

from tracker.db.database import Database
from tracker.services.core.views import Done
from tracker.services.instrument import run_matching
from tracker.ui.context import tracker_app
from tracker.ui.screens.form import Field, FormScreen


class MatchRowScreen(FormScreen):
    TITLE = "Match an instrument row"
    INTRO = (
        "Scan the cut's label, or type the specimen's catalogue number when it has one cut "
        "of the session's element. A column, a reference material or the bracketing "
        "standard's name are accepted too. Then reduce the session again (r)."
    )
    FIELDS: ClassVar[list[Field]] = [
        Field("session", "Session", kind="id", hint="IS-…"),
        Field("run-order", "Run", hint="the row's run number"),
        Field("target", "Cut", kind="id", hint="scan its label, or a catalogue number"),
    ]

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return run_matching.match_row(db, actor, values)

    def after_save(self, done: Done[Any]) -> None:
        """Back to the session, which reads itself again and asks for a new reduction."""
        from tracker.ui.screens.session import SessionScreen

        app = tracker_app(self)
        below = app.screen_stack[-2] if len(app.screen_stack) > 1 else None
        if isinstance(below, SessionScreen) and below.session == done.item.session:
            app.pop_screen()  # the session reads itself again as it comes back
        else:
            app.open_id(done.item.session, replace=True)
