"""The lab's dissolution recovery window: the recoveries it accepts without a flag.

Stored like the backdating window (:mod:`tracker.services.admin.backdating`): one row of
``lab_setting`` (key :data:`RECOVERY_WINDOW_KEY`, value ``"low-high"`` in per cent),
changed by managers only, each change one custody event naming the window before and
after. :func:`recovery_window` is what every reader of a recovery uses
(:func:`tracker.services.bench.recovery.dissolution_recoveries`).
"""

from __future__ import annotations

from typing import Annotated

from pydantic import Field, model_validator
from sqlalchemy import select
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.errors import RuleViolation
from tracker.domain.models import LabSetting
from tracker.domain.recovery import DEFAULT_WINDOW, Window
from tracker.services.admin.lab_settings import is_set, write_setting
from tracker.services.core.common import finish
from tracker.services.core.inputs import FieldProblem, Raw, Request, parse
from tracker.services.core.uow import unit_of_work
from tracker.services.core.views import Done, View

RECOVERY_WINDOW_KEY = "recovery_window_percent"
_CACHE_KEY = "tracker.recovery_window"

Percent = Annotated[float, Field(gt=0, le=1000)]


def recovery_window(session: Session) -> Window:
    """The lab's window, or :data:`tracker.domain.recovery.DEFAULT_WINDOW`; read once per
    session (a lineage tree asks for every solution in it)."""
    cached = session.info.get(_CACHE_KEY)
    if isinstance(cached, Window):
        return cached
    text = session.scalar(select(LabSetting.value).where(LabSetting.key == RECOVERY_WINDOW_KEY))
    window = DEFAULT_WINDOW if text is None else _read(text)
    session.info[_CACHE_KEY] = window
    return window


def _read(text: str) -> Window:
    low, _, high = text.partition("-")
    return Window(float(low) / 100, float(high) / 100)


def _said(window: Window) -> str:
    return f"{window.low * 100:g}-{window.high * 100:g}"


class RecoveryWindow(View):
    low_percent: float
    high_percent: float
    said: str  # as a person reads it: "90–110 %"
    default: bool  # the lab has not set one; tracker's default applies


class SetRecoveryWindow(Request):
    low_percent: Percent
    high_percent: Percent

    @model_validator(mode="after")
    def _ordered(self) -> SetRecoveryWindow:
        if self.low_percent >= self.high_percent:
            raise FieldProblem(
                "low-percent", self.low_percent, f"is not below the high end {self.high_percent}"
            )
        return self


def _view(window: Window, default: bool) -> RecoveryWindow:
    return RecoveryWindow(
        low_percent=round(window.low * 100, 6),
        high_percent=round(window.high * 100, 6),
        said=window.said(),
        default=default,
    )


def show_recovery_window(db: Database) -> RecoveryWindow:
    with db.read_session() as session:
        window = recovery_window(session)
        default = not is_set(session, RECOVERY_WINDOW_KEY)
    return _view(window, default)


def set_recovery_window(
    db: Database, actor: str | None, data: SetRecoveryWindow | Raw
) -> Done[RecoveryWindow]:
    """Set the dissolution recoveries the lab accepts without a flag (managers only)."""
    request = parse(SetRecoveryWindow, data)
    window = Window(request.low_percent / 100, request.high_percent / 100)
    with unit_of_work(db, actor) as uow:
        uow.require_manager("setting the dissolution recovery window")
        before = recovery_window(uow.session)
        if _said(before) == _said(window):
            raise RuleViolation(
                "low-percent", f"{_said(window)} %", "is already the lab's recovery window"
            )
        write_setting(uow, RECOVERY_WINDOW_KEY, _said(window))
        uow.session.info.pop(_CACHE_KEY, None)
        payload = {"window_percent": _said(window), "previous_percent": _said(before)}
        view = _view(window, False)
        return finish(uow, "settings.recovery_window_set", None, payload, lambda: view)
