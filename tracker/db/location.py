"""Where a person's files live: the default database (when no ``--db`` or TRACKER_DB names
one) and the config folder (the interface's memory, private key files).
"""

from __future__ import annotations

import os
from pathlib import Path


def config_dir() -> Path:
    """The user's config folder (platformdirs), or TRACKER_CONFIG_DIR when that is set
    (tests point it at a temporary folder)."""
    given = os.environ.get("TRACKER_CONFIG_DIR")
    if given:
        return Path(given)
    from platformdirs import user_config_dir

    return Path(user_config_dir("tracker", appauthor=False))


def default_database() -> Path:
    """The per-user default database file (TRACKER_DB and --db override it)."""
    from platformdirs import user_data_dir

    return Path(user_data_dir("tracker", appauthor=False)) / "tracker.sqlite"
