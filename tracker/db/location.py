"""Where a person's files live: the default database (when no ``--db`` or TRACKER_DB names
one), the config folder (the interface's memory, private key files) and the checkpoints of
verified ledgers.
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


def checkpoint_dir() -> Path:
    """Where this computer keeps what it verified of each ledger (platformdirs' user state
    folder), or TRACKER_CHECKPOINT_DIR when that is set (tests point it at a temporary
    folder). Outside every database on purpose: a checkpoint must not be editable by whoever
    can edit the ledger it vouches for."""
    given = os.environ.get("TRACKER_CHECKPOINT_DIR")
    if given:
        return Path(given)
    from platformdirs import user_state_dir

    return Path(user_state_dir("tracker", appauthor=False)) / "checkpoints"
