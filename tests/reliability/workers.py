"""Child processes for the concurrency and crash tests, forked from one warm "zygote".

``python -m tests.reliability.workers`` starts a zygote: it imports tracker once, then
reads one JSON job per line on stdin, forks a child for it and prints the child's pid.
A child opens its own database connection (nothing is shared across the fork), runs
the job, and leaves with ``os._exit``. Forking from a warm process costs milliseconds,
so eight racing drillers start together and twenty-odd crash victims cost no start-up.

Children report through files: a JSON result (written whole, then renamed into place)
and, for crash jobs, a marker file where each step of the write transaction appends
one line — ``call k``, ``begin``, ``commit``, ``committed``, ``done k`` — so the parent
can tell where its SIGKILL landed.
"""

from __future__ import annotations

import json
import os
import random
import signal
import sys
import time
import traceback
from collections.abc import Callable
from pathlib import Path
from typing import Any

from sqlalchemy import Engine, event
from sqlalchemy.exc import DBAPIError
from sqlalchemy.orm import Session

from tracker.db.database import open_database
from tracker.domain.errors import RuleViolation, TrackerError
from tracker.services.admin import setup
from tracker.services.bench import batch_sheet, drilling
from tracker.services.instrument import sessions
from tracker.services.loans import manifests

Job = Callable[[dict[str, Any]], dict[str, Any]]


def _write_result(path: str, data: dict[str, Any]) -> None:
    staged = Path(path + ".part")
    staged.write_text(json.dumps(data), encoding="utf-8")
    staged.replace(path)


def _wait_for(gate: str) -> None:
    while not Path(gate).exists():
        time.sleep(0.005)


# ---------------------------------------------------------------- the race


def drill_race(args: dict[str, Any]) -> dict[str, Any]:
    """Drill the same specimens as fast as allowed; every third attempt also adds a place."""
    db = open_database(args["db"])
    rng = random.Random(args["seed"])
    done: list[dict[str, Any]] = []
    refused, errors = 0, []
    _wait_for(args["gate"])
    for attempt in range(args["attempts"]):
        specimen = rng.choice(args["specimens"])
        request = {
            "specimen": specimen,
            "tissue": "enamel",
            "tare": "1000.000 mg",
            "gross": f"{1000 + args['mass_mg']:.3f} mg",
        }
        try:
            answer = drilling.drill(db, args["actor"], request)
            done.append(
                {
                    "kind": "drill",
                    "seq": answer.event_seq,
                    "hash": answer.event_hash,
                    "specimen": specimen,
                    "powder": answer.item.id,
                }
            )
        except RuleViolation:
            refused += 1
        except (TrackerError, DBAPIError) as problem:
            errors.append(f"{type(problem).__name__}: {problem}")
        if attempt % 3 == 2:
            place = {"kind": "building", "name": f"race {args['worker']}-{attempt}"}
            try:
                placed = setup.add_location(db, args["actor"], place)
                done.append({"kind": "place", "seq": placed.event_seq, "hash": placed.event_hash})
            except (TrackerError, DBAPIError) as problem:
                errors.append(f"{type(problem).__name__}: {problem}")
    db.close()
    return {"done": done, "refused": refused, "errors": errors}


# ---------------------------------------------------------------- crash victims


class Markers:
    """Appends one line per step to the marker file, unbuffered, for the parent to read."""

    def __init__(self, path: str) -> None:
        self.fd = os.open(path, os.O_WRONLY | os.O_APPEND | os.O_CREAT, 0o600)

    def __call__(self, text: str) -> None:
        os.write(self.fd, f"{text}\n".encode())

    def watch(self, engine: Engine) -> None:
        event.listen(engine, "begin", lambda *_: self("begin"))
        event.listen(engine, "commit", lambda *_: self("commit"))
        event.listen(Session, "after_commit", lambda *_: self("committed"))


def _repeat_until_done(args: dict[str, Any], calls: list[Callable[[Any], Any]]) -> None:
    """Run each call in turn; "already there" refusals mean an earlier round finished it."""
    db = open_database(args["db"])
    mark = Markers(args["markers"])
    mark.watch(db.engine)
    for number, call in enumerate(calls):
        mark(f"call {number}")
        try:
            answer = call(db)
            mark(f"done {number} {answer.event_seq}")
        except RuleViolation as refusal:
            if "already" not in refusal.reason:
                raise
            mark(f"skip {number}")
    mark("finished")
    db.close()


def import_files(args: dict[str, Any]) -> dict[str, Any]:
    def importer(path: str) -> Callable[[Any], Any]:
        content = Path(path).read_bytes()
        request = {
            "profile": args["profile"],
            "filename": Path(path).name,
            "content": content,
            "name": Path(path).stem,
            "instrument": "MC-ICP-MS (invented)",
            "element": "Ca",
            "bracketing_standard": "STD-X",
        }
        return lambda db: sessions.import_session(db, args["actor"], request)

    _repeat_until_done(args, [importer(p) for p in args["files"]])
    return {}


def enter_sheets(args: dict[str, Any]) -> dict[str, Any]:
    def enter(batch: str, path: str) -> Callable[[Any], Any]:
        request = {"batch": batch, "filename": Path(path).name, "content": Path(path).read_bytes()}
        return lambda db: batch_sheet.enter_sheet(db, args["actor"], request)

    _repeat_until_done(args, [enter(b, p) for b, p in args["sheets"]])
    return {}


def import_manifests(args: dict[str, Any]) -> dict[str, Any]:
    """A lender's list per loan; importing a list again changes nothing (no event)."""

    def load(loan: str, path: str) -> Callable[[Any], Any]:
        request = {"loan": loan, "filename": Path(path).name, "content": Path(path).read_bytes()}
        return lambda db: manifests.import_manifest(db, args["actor"], request)

    _repeat_until_done(args, [load(loan, p) for loan, p in args["manifests"]])
    return {}


JOBS: dict[str, Job] = {
    "drill_race": drill_race,
    "import_files": import_files,
    "enter_sheets": enter_sheets,
    "import_manifests": import_manifests,
}


def _child(job: dict[str, Any]) -> None:
    outcome = 0
    try:
        result = JOBS[job["job"]](job["args"])
        if "out" in job["args"]:
            _write_result(job["args"]["out"], result)
    except BaseException:
        outcome = 1
        if "out" in job["args"]:
            _write_result(job["args"]["out"], {"crash": traceback.format_exc()})
        else:
            traceback.print_exc()
    os._exit(outcome)


def zygote() -> None:
    """Fork one child per job line; children are reaped by the kernel (SIGCHLD ignored).
    The test operators' keys are unlocked once here, as a person's session would be."""
    from tests import keys

    keys.unlock_all()
    signal.signal(signal.SIGCHLD, signal.SIG_IGN)
    print("ready", flush=True)
    for line in sys.stdin:
        job = json.loads(line)
        pid = os.fork()
        if pid == 0:
            _child(job)
        print(pid, flush=True)


if __name__ == "__main__":
    zygote()
