"""What the terminal interface remembers on this machine: the operator last chosen per database;
and how long it keeps a signing key unlocked without input (TRACKER_LOCK_AFTER).

Kept as JSON in the user's config directory (platformdirs), or in TRACKER_CONFIG_DIR when
that is set (tests point it at a temporary folder). Nothing here touches the database.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

from tracker.db.location import config_dir


def _file() -> Path:
    return config_dir() / "tui.json"


def _read() -> dict[str, object]:
    try:
        data = json.loads(_file().read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return {}
    return data if isinstance(data, dict) else {}


def remembered_operator(database: str) -> str | None:
    """The operator last chosen on this machine for ``database`` (else for any database)."""
    data = _read()
    per_db = data.get("operators")
    if isinstance(per_db, dict) and isinstance(per_db.get(database), str):
        return str(per_db[database])
    last = data.get("last_operator")
    return last if isinstance(last, str) else None


def remember_operator(database: str, code: str) -> None:
    """Keep ``code`` as this machine's operator for ``database``; a failure to write is harmless."""
    data = _read()
    per_db = data.get("operators")
    operators = dict(per_db) if isinstance(per_db, dict) else {}
    operators[database] = code
    data["operators"], data["last_operator"] = operators, code
    try:
        _file().parent.mkdir(parents=True, exist_ok=True)
        _file().write_text(json.dumps(data, indent=2, sort_keys=True), encoding="utf-8")
    except OSError:
        pass


LOCK_AFTER_ENV = "TRACKER_LOCK_AFTER"
DEFAULT_LOCK_AFTER = 15 * 60.0  # seconds without a key press or a click
MAX_LOCK_AFTER = 24 * 3600.0


def lock_after() -> float:
    """How long the interface keeps a signing key unlocked without input, in seconds:
    TRACKER_LOCK_AFTER, else 15 minutes. Anything but a number of seconds up to a day is
    refused in one line."""
    from tracker.domain.errors import InputError

    given = os.environ.get(LOCK_AFTER_ENV)
    if given is None or not given.strip():
        return DEFAULT_LOCK_AFTER
    try:
        seconds = float(given)
    except ValueError:
        seconds = -1.0
    if not 0 < seconds <= MAX_LOCK_AFTER:  # also refuses NaN
        raise InputError(
            LOCK_AFTER_ENV, given, "is not a number of seconds above 0, up to 86400 (a day)"
        )
    return seconds
