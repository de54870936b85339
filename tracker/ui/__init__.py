"""The terminal interface (Textual). Imported only when a person opens it: the CLI and the
services never load textual at import time."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from tracker.domain.timeutil import Clock, utcnow
from tracker.services.glance import start_glance

if TYPE_CHECKING:
    from tracker.ui.app import TrackerApp


def make_app(
    target: str, operator: str | None, *, clock: Clock = utcnow, out_dir: Path | None = None
) -> TrackerApp:
    """The app on ``target``, its overview's glance already being read.

    The glance starts before Textual is imported, so the database file is read while
    Textual loads (sqlite3 lets go of the interpreter while it reads). Only with an
    operator named: without one, the first screen is the operator's choice.
    """
    glancer = start_glance(target, clock().date()) if operator else None
    from tracker.ui.app import TrackerApp

    return TrackerApp(target, operator, clock=clock, out_dir=out_dir, glancer=glancer)


def run_tui(target: str, operator: str | None) -> int:
    """Open the terminal interface on ``target``; returns the exit code (a setting it cannot
    use, such as TRACKER_LOCK_AFTER, is one line on stderr)."""
    import sys

    from tracker.domain.errors import TrackerError
    from tracker.domain.text_rules import visible

    try:
        app = make_app(target, operator, out_dir=Path.cwd())
    except TrackerError as error:
        print(f"error: {visible(error.one_line(), keep_lines=False)}", file=sys.stderr)
        return error.exit_code
    app.run()
    return app.return_code or 0
