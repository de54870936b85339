"""The lab's settings table, as the settings' services write and read it: one row a key,
holding its value as text with who set it and when (the ledger event says what it was)."""

from __future__ import annotations

from sqlalchemy.orm import Session

from tracker.domain.models import LabSetting
from tracker.services.core.uow import UnitOfWork


def is_set(session: Session, key: str) -> bool:
    """Whether the lab has set ``key`` (else tracker's default applies)."""
    return session.get(LabSetting, key) is not None


def write_setting(uow: UnitOfWork, key: str, value: str) -> None:
    """Keep ``value`` for ``key`` in this unit of work, as set by its operator now."""
    row = uow.session.get(LabSetting, key) or LabSetting(key=key)
    row.value = value
    row.updated_by, row.updated_at = uow.operator.code, uow.now
    uow.session.add(row)
