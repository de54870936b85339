"""Lab-wide settings: one row per key, shared by every workstation, changed by managers.

Each change is one custody event saying the value before and after; the row holds the
value in force. Keys: ``uri_prefix`` (the link printed before IDs in QR codes) and
``backdating_window_hours`` (how far back an entry may be dated without a manager).
"""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import ForeignKey, String, Text
from sqlalchemy.orm import Mapped, mapped_column

from tracker.domain.base import Base


class LabSetting(Base):
    __tablename__ = "lab_setting"

    key: Mapped[str] = mapped_column(String(40), primary_key=True)
    value: Mapped[str] = mapped_column(Text)
    updated_by: Mapped[str] = mapped_column(String(32), ForeignKey("operator.code"), index=True)
    updated_at: Mapped[datetime]
