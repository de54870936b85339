"""Cold start of the terminal interface on the scale's database, against a bare Textual app.

Each run launches a fresh interpreter and times it from launch until the child says the
first screen is ready: for tracker, the loans overview with every open loan in its table, as
``tracker --db FILE --as OPERATOR`` opens it (the command line loaded, then
``tracker.ui.make_app``); for the floor, one static line. Both include Python's start-up and
Textual's import; tracker's also loads the commands and the services, opens the database
and reconciles the open loans (``reconcile.reconcile``, the CLI overview's own service).
"""

from __future__ import annotations

import subprocess
import tempfile
import time

from benchmarks import children
from benchmarks.measure import Figure, Target
from benchmarks.plan import FOUNDER


def launch(*args: str) -> tuple[float, str]:
    """Seconds from launch until the child prints its ``ready`` line, and that line."""
    with tempfile.TemporaryDirectory() as config, tempfile.TemporaryFile() as trouble:
        env = children.environment(TRACKER_CONFIG_DIR=config)
        started = time.perf_counter()
        process = subprocess.Popen(
            children.command("tui_probe", *args),
            stdin=subprocess.DEVNULL,
            stdout=subprocess.PIPE,
            stderr=trouble,  # a file, not a pipe: a chatty child can never block on it
            text=True,
            env=env,
        )
        assert process.stdout is not None
        line = process.stdout.readline().strip()
        took = time.perf_counter() - started
        process.stdout.close()
        process.wait()
        trouble.seek(0)
        last = trouble.read().decode("utf-8", "replace").strip().splitlines()[-3:]
    if not line.startswith("ready"):
        raise RuntimeError(f"the interface probe {args[0]} did not get ready: {last}")
    return took, line


def cold_start_figure(target: str, repeat: int) -> Figure:
    took, bare = float("inf"), float("inf")
    line = ""
    for _ in range(max(repeat, 1)):
        seconds, line = launch("app", target, FOUNDER["code"])
        took = min(took, seconds)
        bare = min(bare, launch("bare")[0])
    figure = Figure(
        "tui",
        "TUI cold start to the overview populated",
        "s",
        took,
        bare,
        "bare Textual app showing one static line",
        Target(ratio_most=2.0),
    )
    figure.notes.append(f"overview rows: {line.split()[-1]}")
    return figure
