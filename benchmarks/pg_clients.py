"""Concurrent writers for the PostgreSQL figure: each a separate process, as each workstation is.

``drills`` records one small drill per specimen it is given, through the drill service (the
loan's rules checked, one ledger event each); ``floor`` does the least a writer must: take the
lab's writer lock and read the ledger head, then commit. Both report when they started and
finished, on the shared wall clock, so the parent can count completions per second.
"""

from __future__ import annotations

import time
from typing import Any

from benchmarks.plan import TECHNICIANS
from benchmarks.shape import END

TARE_MG = "1000.000 mg"
GROSS_MG = "1000.100 mg"  # 0.1 mg of powder per drill: far inside every loan's allowance


def drills(url: str, work: list[tuple[str, str]], who: int, start: Any, out: Any) -> None:
    """Drill each (specimen, tissue) once; put (started, finished, count) on ``out``."""
    from benchmarks.plan import bench_keyring
    from tracker.db.database import open_database
    from tracker.demo import StepClock
    from tracker.services.bench import drilling

    db = open_database(url, clock=StepClock(END), upgrade=False)
    db.keyring = bench_keyring()  # the synthetic operators sign
    actor = TECHNICIANS[who % len(TECHNICIANS)]
    try:
        start.wait()
        began = time.time()
        for specimen, tissue in work:
            drilling.drill(
                db,
                actor,
                {"specimen": specimen, "tissue": tissue, "tare": TARE_MG, "gross": GROSS_MG},
            )
        out.put((began, time.time(), len(work)))
    except Exception as exc:  # the parent waits for every client: tell it, never go silent
        out.put(("failed", f"client {who}: {type(exc).__name__}: {exc}", 0))
        raise
    finally:
        db.close()


def floor(url: str, count: int, start: Any, out: Any) -> None:
    """``count`` transactions that take the writer lock, read the ledger head and commit."""
    from tracker.db.database import open_database
    from tracker.db.engine import PG_WRITER_LOCK

    db = open_database(url, upgrade=False)
    connection = db.engine.raw_connection()
    try:
        cursor = connection.cursor()
        start.wait()
        began = time.time()
        for _ in range(count):
            cursor.execute("SELECT pg_advisory_xact_lock(%s)", (PG_WRITER_LOCK,))
            cursor.execute("SELECT seq, hash FROM custody_event ORDER BY seq DESC LIMIT 1")
            cursor.fetchall()
            connection.commit()
        out.put((began, time.time(), count))
    except Exception as exc:  # as in drills: the parent must hear of it
        out.put(("failed", f"floor client: {type(exc).__name__}: {exc}", 0))
        raise
    finally:
        connection.close()
        db.close()
