"""Ledger verification of the whole chain (hashes and signatures), time and peak memory, each
in a fresh process; and what signing adds to one action.

Both the service and the floor run in child interpreters so that neither inherits the
other's caches, and so the operating system can say how much memory each needed at most
(``ru_maxrss`` of the finished child, which includes the interpreter itself).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from time import perf_counter

from benchmarks import children
from benchmarks.measure import Figure, Target, alternated, best_of
from tracker.db.database import Database
from tracker.db.engine import sqlite_path
from tracker.domain.timeutil import iso_utc


@dataclass(frozen=True)
class ChildRun:
    seconds: float
    peak_mb: float
    events: int
    ok: bool
    head: str


def run_child(*args: str) -> ChildRun:
    """Run ``python -m benchmarks.probe ARGS``; its answer, with the peak memory it saw."""
    answer = children.probe_answer("probe", *args)
    return ChildRun(
        answer["seconds"], answer["peak_mb"], answer["events"], answer["ok"], answer["head"]
    )


def verify_figures(target: str, repeat: int) -> list[Figure]:
    path = sqlite_path(target) if "://" in target else Path(target)
    if path is None:
        raise ValueError("the verify floor reads a SQLite file")
    runs, floors = alternated(
        repeat,
        lambda: run_child("verify", str(path)),
        lambda: run_child("verify-floor", str(path)),
        lambda run: run.seconds,
    )
    best, bare = min(runs, key=lambda r: r.seconds), min(floors, key=lambda r: r.seconds)
    events = best.events
    timing = Figure(
        "verify",
        f"ledger verify, hashes + signatures, of {events:,} events",
        "s",
        best.seconds,
        bare.seconds,
        "bare loop: sqlite3 rows hashed with hashlib, signatures checked with cryptography",
        Target(ratio_most=1.5),
    )
    memory = Figure(
        "verify_memory",
        "ledger verify, peak memory (whole process, VmHWM)",
        "MB",
        max(r.peak_mb for r in runs),
        max(f.peak_mb for f in floors),
        "the bare loop's process",
        Target(most=200.0),
    )
    for run in (*runs, *floors):
        if not run.ok or run.head != best.head or run.events != events:
            timing.problems.append(f"verdicts differ: {run}")
            break
    timing.notes.append(f"head {best.head[:16]}…, intact: {best.ok}")
    timing.compared = memory.compared = "the same head and verdict"
    return [timing, memory]


SIGNED_ACTIONS = 2000  # per timing: the per-action figure is their mean


def signing_figure(db: Database, repeat: int) -> Figure:
    """What signing adds to one action, as a unit of work does it: ask the ledger who may
    sign (one indexed count when no key event is new), pick the operator's unlocked key,
    hash the event and sign its hash (``seal``, which every writer of events calls). Floor:
    ``hashlib`` over the same bytes and ``cryptography``'s bare Ed25519 sign of the hash."""
    import hashlib

    from benchmarks.plan import TECHNICIANS, bench_signer
    from tracker.domain.ledger import CURRENT_FORMAT, GENESIS_HASH, canonical_bytes, seal
    from tracker.services.core import authority as signing

    code, at = TECHNICIANS[0], db.clock()
    payload = '{"mass_mg":2.15,"specimen":"SP-00001-W","tissue":"enamel"}'
    bare_key = bench_signer(code).private
    with db.read_session() as session:
        signing.current(session, db)  # a process's first write replays the key events once
        origin = signing.origin(session, db)

        def ours() -> float:
            started = perf_counter()
            for n in range(1, SIGNED_ACTIONS + 1):
                signer = signing.signer_for(signing.current(session, db), code, db.keyring)
                assert signer is not None
                seal(
                    n, at, code, origin, "powder.drilled", "PW", "SP", GENESIS_HASH, payload, signer
                )
            return (perf_counter() - started) / SIGNED_ACTIONS

        def floor() -> float:
            stamp = iso_utc(at)
            started = perf_counter()
            for n in range(1, SIGNED_ACTIONS + 1):
                data = canonical_bytes(
                    CURRENT_FORMAT,
                    n,
                    stamp,
                    code,
                    origin,
                    "powder.drilled",
                    "PW",
                    "SP",
                    GENESIS_HASH,
                    payload,
                )
                bare_key.sign(hashlib.sha256(data).hexdigest().encode("ascii"))
            return (perf_counter() - started) / SIGNED_ACTIONS

        measured, bare = best_of(repeat, ours, floor)
    figure = Figure(
        "signing",
        "signing per action (who may sign, the key, hash and Ed25519 signature)",
        "s",
        measured,
        bare,
        "hashlib and cryptography's bare Ed25519 sign of the same bytes",
        Target(most=0.001),
    )
    figure.notes.append(f"mean of {SIGNED_ACTIONS:,} actions by {code}")
    figure.compared = "not compared: the floor signs a bare hash"
    return figure
