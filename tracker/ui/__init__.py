"""The terminal interface (Textual). Imported only when a person opens it: the CLI and the
services never load textual at import time."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from tracker.domain.timeutil import Clock, utcnow

if TYPE_CHECKING:
    from tracker.ui.app import TrackerApp


def make_app(
    target: str, operator: str | None, *, clock: Clock = utcnow, out_dir: Path | None = None
) -> TrackerApp:
    """The app on ``target`` (what ``tracker --db TARGET --as OPERATOR`` opens)."""
    from tracker.ui.app import TrackerApp

    return TrackerApp(target, operator, clock=clock, out_dir=out_dir)


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
