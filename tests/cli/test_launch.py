"""``python -m tracker`` is the command line: piped, it prints the overview (the interface
opens only at a terminal; tests/ui/test_entry.py covers that choice)."""

from __future__ import annotations

import subprocess
import sys


def test_piped_tracker_prints_the_overview(
    demo_db: object,
) -> None:
    result = subprocess.run(
        [sys.executable, "-m", "tracker", "--db", str(demo_db), "--json"],
        capture_output=True,
        text=True,
        timeout=120,
        stdin=subprocess.DEVNULL,
    )
    assert result.returncode == 0, result.stderr
    assert '"reference"' in result.stdout and "KF-2026-014" in result.stdout
    plain = subprocess.run(
        [sys.executable, "-m", "tracker", "--db", str(demo_db)],
        capture_output=True,
        text=True,
        timeout=120,
        stdin=subprocess.DEVNULL,
    )
    assert plain.returncode == 0 and "KF-2026-014" in plain.stdout  # not a TTY: printed
