"""Where a person's database lives when no ``--db`` (or TRACKER_DB) names one.

Kept free of SQLAlchemy: the console script asks for it before deciding what to load.
"""

from __future__ import annotations

from pathlib import Path


def default_database() -> Path:
    """The per-user default database file (TRACKER_DB and --db override it)."""
    from platformdirs import user_data_dir

    return Path(user_data_dir("tracker", appauthor=False)) / "tracker.sqlite"
