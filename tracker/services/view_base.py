"""The base of every view a service gives back, in a module that loads no database code.

Kept apart from :mod:`tracker.services.views` (which builds views from ORM rows) so that
a view can be defined where SQLAlchemy must not load: the first screen's glance.
"""

from __future__ import annotations

from pydantic import BaseModel, ConfigDict


class View(BaseModel):
    model_config = ConfigDict(frozen=True)
