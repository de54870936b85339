"""Cold start of the terminal interface on the scale's database, against a bare Textual app.

Each run launches a fresh interpreter and times it from launch until the child says the
first screen is ready: for tracker, the loans overview with every open loan in its table, as
``tracker --db FILE --as OPERATOR`` opens it (the command line loaded, then
``tracker.ui.make_app``); for the floor, one static line. Both include Python's start-up and
Textual's import; tracker's also loads the commands and the services, opens the database
and reconciles the open loans (``reconcile.reconcile``, the CLI overview's own service).
"""

from __future__ import annotations

import select
import subprocess
import tempfile
import time

from benchmarks import children
from benchmarks.measure import Figure, Target
from benchmarks.plan import FOUNDER

TIMEOUT = 120.0  # seconds: a probe that never gets ready is reported, never waited for


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
        ready = select.select([process.stdout], [], [], TIMEOUT)[0]
        line = process.stdout.readline().strip() if ready else ""
        took = time.perf_counter() - started
        process.stdout.close()
        if not ready:
            process.kill()
        process.wait()
        trouble.seek(0)
        last = trouble.read().decode("utf-8", "replace").strip().splitlines()[-3:]
    if not line.startswith("ready"):
        said = "no answer within the timeout" if not ready else f"did not get ready: {last}"
        raise RuntimeError(f"the interface probe {args[0]}: {said}")
    return took, line


def cold_start_figure(target: str, repeat: int) -> Figure:
    took, bare = float("inf"), float("inf")
    line, trouble = "", ""
    for _ in range(max(repeat, 1)):
        try:
            seconds, line = launch("app", target, FOUNDER["code"])
            took = min(took, seconds)
            bare = min(bare, launch("bare")[0])
        except RuntimeError as error:  # a probe that never got ready: reported, not raised
            trouble = str(error)
    figure = Figure(
        "tui",
        "interface cold start until usable: the overview holds the services' answer",
        "s",
        took if took < float("inf") else TIMEOUT,
        bare if bare < float("inf") else TIMEOUT,
        "bare Textual app showing one static line",
        Target(most=1.0),
    )
    if trouble:
        figure.problems.append(trouble)
    figure.compared = "the overview's rows against the open loans counted by SQL"
    if line:
        shown, open_loans = int(line.split()[-1]), _open_loans(target)
        figure.notes.append(f"overview rows: {shown}")
        if shown != open_loans:
            figure.problems.append(f"the overview shows {shown} loans; {open_loans} are open")
    return figure


def _open_loans(target: str) -> int:
    import sqlite3

    with sqlite3.connect(f"file:{target}?mode=ro", uri=True) as connection:
        (count,) = connection.execute("SELECT COUNT(*) FROM loan WHERE status = 'open'").fetchone()
    return int(count)
