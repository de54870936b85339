"""The lab's backdating window: how far back an entry may be dated without a manager.

A lab-wide setting like the label URI prefix (:mod:`tracker.services.labels.handling`): one row of
``lab_setting``, changed by managers only, each change one custody event naming the value
before and after. :func:`tracker.services.core.lookup.backdating_window` is what every dated
service reads (through ``common.action_time``).
"""

from __future__ import annotations

from datetime import timedelta
from typing import Annotated

from pydantic import Field

from tracker.db.database import Database
from tracker.domain.errors import RuleViolation
from tracker.domain.timing import describe_window, hours_of, parse_window
from tracker.services.admin.lab_settings import is_set, write_setting
from tracker.services.core.common import finish
from tracker.services.core.inputs import Raw, Request, parse
from tracker.services.core.lookup import BACKDATING_WINDOW_KEY, backdating_window
from tracker.services.core.uow import unit_of_work
from tracker.services.core.views import Done, View


class BackdatingWindow(View):
    hours: int
    said: str  # as a person says it: "4 days"
    default: bool  # the lab has not set one; tracker's default applies


class SetBackdatingWindow(Request):
    window: Annotated[str, Field(min_length=1, max_length=40)]  # "4 days", "36 hours"


def _view(window: timedelta, default: bool) -> BackdatingWindow:
    return BackdatingWindow(hours=hours_of(window), said=describe_window(window), default=default)


def show_backdating_window(db: Database) -> BackdatingWindow:
    with db.read_session() as session:
        window = backdating_window(session)
        default = not is_set(session, BACKDATING_WINDOW_KEY)
    return _view(window, default)


def set_backdating_window(
    db: Database, actor: str | None, data: SetBackdatingWindow | Raw
) -> Done[BackdatingWindow]:
    """Set how far back an entry may be dated without a manager (managers only)."""
    request = parse(SetBackdatingWindow, data)
    window = parse_window(request.window)
    with unit_of_work(db, actor) as uow:
        uow.require_manager("setting the backdating window")
        before = backdating_window(uow.session)
        if before == window:
            raise RuleViolation("window", request.window, "is already the lab's setting")
        write_setting(uow, BACKDATING_WINDOW_KEY, str(hours_of(window)))
        payload = {"window_hours": hours_of(window), "previous_hours": hours_of(before)}
        view = _view(window, False)
        return finish(uow, "settings.backdating_window_set", None, payload, lambda: view)
