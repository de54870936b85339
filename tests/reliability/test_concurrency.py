"""Eight processes drill the same specimens at once, on SQLite and on PostgreSQL.

The loan allows 2.000 mg per specimen, 6.000 mg in all and three sampled specimens;
every drill takes 0.250 mg (exact in binary, so sums are exact) from one of four
specimens. Eight processes make 50 attempts each, every third attempt also adding a
location, all appending to one ledger. However the race goes, exactly 24 drills fit
(three specimens × eight drills = 6.000 mg, every limit reached at once), so:

- the allowances are reached and never exceeded (per specimen, in total, in count);
- every event a worker was told about is in the ledger with that number and hash,
  and the ledger holds nothing else (none lost, none duplicated);
- the chain verifies and never forks (no two events share a previous hash).
"""

from __future__ import annotations

import json
import time
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import func, select

from tests import factories as make
from tests.reliability.harness import Zygote, wait_for_files
from tests.reliability.report import record
from tracker.db.database import Database, open_database
from tracker.domain.models import CustodyEvent, Powder, Specimen
from tracker.services.ledger import chain

pytestmark = pytest.mark.slow
WORKERS, ATTEMPTS, DRILL_MG = 8, 50, 0.25
PER_SPECIMEN_MG, TOTAL_MG, SPECIMENS_ALLOWED = 2.0, 6.0, 3


def _lab(db: Database) -> list[str]:
    loan = make.loan(
        db,
        max_mass_per_specimen=f"{PER_SPECIMEN_MG} mg",
        max_total_mass=f"{TOTAL_MG} mg",
        max_specimens_sampled=SPECIMENS_ALLOWED,
    )
    return [make.specimen(db, loan) for _ in range(4)]


def _race(zygote: Zygote, url: str, specimens: list[str], folder: Path) -> list[dict[str, Any]]:
    gate = folder / "go"
    outs = [folder / f"worker-{n}.json" for n in range(WORKERS)]
    for n, out in enumerate(outs):
        zygote.fork(
            "drill_race",
            {
                "db": url,
                "worker": n,
                "attempts": ATTEMPTS,
                "specimens": specimens,
                "seed": n,
                "mass_mg": DRILL_MG,
                "gate": str(gate),
                "out": str(out),
                "actor": "tech",
            },
        )
    time.sleep(0.3)  # let every child open its database before the gate opens
    gate.touch()
    wait_for_files(outs, timeout=240)
    results = [json.loads(out.read_text(encoding="utf-8")) for out in outs]
    crashed = [r["crash"] for r in results if "crash" in r]
    assert crashed == []
    return results


BACKENDS = ["sqlite", pytest.param("postgresql", marks=pytest.mark.postgresql)]


@pytest.mark.parametrize("db_url", BACKENDS, indirect=True)
def test_eight_processes_never_exceed_the_allowance_nor_lose_or_fork_events(
    db_url: str, zygote: Zygote, tmp_path: Path
) -> None:
    db = open_database(db_url)
    try:
        specimens = _lab(db)
        head_before = chain.verify(db).head_seq
        started = time.monotonic()
        results = _race(zygote, db_url, specimens, tmp_path)
        seconds = time.monotonic() - started
        _check(db, results, head_before)
    finally:
        db.close()
    drills = sum(1 for r in results for d in r["done"] if d["kind"] == "drill")
    refused = sum(r["refused"] for r in results)
    errors = [e for r in results for e in r["errors"]]
    assert errors == []  # no SQLITE_BUSY, no serialization failure, nothing else
    record(
        f"concurrency on {db.backend}",
        f"{WORKERS} processes × {ATTEMPTS} drill attempts (+ {WORKERS * (ATTEMPTS // 3)} "
        f"location adds) in {seconds:.1f} s",
        f"{drills} drills fit exactly the allowance, {refused} refused, 0 breaches, 0 lost or "
        f"duplicated events, chain unforked; busy/serialization errors: {len(errors)}",
    )


def _check(db: Database, results: list[dict[str, Any]], head_before: int) -> None:
    done = [d for r in results for d in r["done"]]
    with db.read_session() as session:
        rows = session.execute(
            select(Specimen.id, func.count(Powder.id), func.coalesce(func.sum(Powder.mass_mg), 0))
            .outerjoin(Powder, Powder.specimen_id == Specimen.id)
            .group_by(Specimen.id)
        ).all()
        events = dict(session.execute(select(CustodyEvent.seq, CustodyEvent.hash)).all())
        forks = session.execute(
            select(CustodyEvent.prev_hash).group_by(CustodyEvent.prev_hash).having(func.count() > 1)
        ).all()
    masses = [float(mass) for _, count, mass in rows if count]
    # the limits, reached and never exceeded (0.25 mg steps are exact in binary)
    assert all(m <= PER_SPECIMEN_MG for m in masses) and sum(masses) <= TOTAL_MG
    assert len(masses) <= SPECIMENS_ALLOWED
    assert sum(masses) == TOTAL_MG and len(masses) == SPECIMENS_ALLOWED
    drills = [d for d in done if d["kind"] == "drill"]
    assert len(drills) * DRILL_MG == sum(masses)
    # none lost: every event a worker was told about is there, with its hash ...
    assert all(events.get(d["seq"]) == d["hash"] for d in done)
    # ... none duplicated or extra: the ledger grew by exactly what the workers recorded
    assert len({d["seq"] for d in done}) == len(done)
    assert max(events) == len(events) == head_before + len(done)
    assert forks == []
    assert chain.verify(db).ok
