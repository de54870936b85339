"""The terminal interface (Textual). Imported only when a person opens it: the CLI and the
services never load textual at import time."""

from __future__ import annotations

from pathlib import Path


def run_tui(target: str, operator: str | None) -> int:
    """Open the terminal interface on ``target``; returns the exit code."""
    from tracker.ui.app import TrackerApp

    app = TrackerApp(target, operator, out_dir=Path.cwd())
    app.run()
    return app.return_code or 0
