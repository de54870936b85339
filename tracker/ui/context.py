"""How screens and widgets reach the running app's database and operator (typed)."""

from __future__ import annotations

from typing import TYPE_CHECKING, cast

from textual.dom import DOMNode

if TYPE_CHECKING:
    from tracker.db.database import Database
    from tracker.ui.app import TrackerApp


def tracker_app(node: DOMNode) -> TrackerApp:
    return cast("TrackerApp", node.app)


def database(node: DOMNode) -> Database:
    db = tracker_app(node).db
    if db is None:  # pragma: no cover - screens are only shown once the database is open
        raise RuntimeError("the database is not open yet")
    return db


def operator(node: DOMNode) -> str | None:
    return tracker_app(node).operator
