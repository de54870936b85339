"""What the terminal interface remembers on this machine: the operator last chosen per database.

Kept as JSON in the user's config directory (platformdirs), or in TRACKER_CONFIG_DIR when
that is set (tests point it at a temporary folder). Nothing here touches the database.
"""

from __future__ import annotations

import json
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
