"""Manifest import of 20,000 rows (validation, rows and the ledger event) against its floor.

Both write into a working copy of the scale's database, each into a loan of its own made
for the purpose. The floor reads the same CSV with the ``csv`` module and inserts the same
column values with ``sqlite3`` ``executemany``, and states them as one JSON document hashed
with ``hashlib`` (the import's ledger event states every row it made): no checks, no
preview, no chain. Afterwards
the two loans must hold the same specimen rows, column for column.
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import random
import shutil
import sqlite3
from functools import partial
from pathlib import Path
from typing import Any

from benchmarks.measure import Figure, Target, settle_writes, timed
from benchmarks.plan import FOUNDER, bench_keyring
from benchmarks.shape import END
from tracker.db.database import open_database
from tracker.demo import StepClock
from tracker.domain.ids import Kind, format_id
from tracker.services.loans import lending, manifests
from tracker.services.loans.manifest_terms import OWN_FIELDS, TERM_FIELDS

ROWS = 20_000
# Darwin Core term -> specimen column, as tracker reads them (the floor writes the same)
COLUMNS = {**TERM_FIELDS, **OWN_FIELDS}
EXTRA = "fieldNumber"  # another Darwin Core term: kept with the specimen as an extra


def manifest_csv(rows: int = ROWS, seed: int = 11) -> bytes:
    """An invented lender's list with Darwin Core headings."""
    rng = random.Random(seed)
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow([*COLUMNS, EXTRA])
    for n in range(1, rows + 1):
        young = round(rng.uniform(0.01, 60.0), 2)
        writer.writerow(
            [
                f"SYN M {n:06d}",
                "SM9999",
                "SYN-P",
                f"Synthetic taxon {rng.randint(1, 400):03d}",
                "tooth",
                f"Synthetic locality {rng.randint(1, 900):04d}",
                f"Synthetic Formation {rng.randint(1, 60):02d}",
                "Paleocene",
                "Pleistocene",
                young,
                round(young + rng.uniform(0, 5), 2),
                f"SYN-F-{n:06d}",
            ]
        )
    return out.getvalue().encode("utf-8")


def _floor(path: Path, loan_id: int, content: bytes, created: str) -> None:
    """csv module + raw sqlite3 executemany of the same column values, in one transaction."""
    reader = csv.DictReader(io.StringIO(content.decode("utf-8")))
    rows = []
    for record in reader:
        values: list[Any] = [loan_id]
        for term, _ in COLUMNS.items():
            text = record[term].strip()
            values.append((float(text) if text else None) if term.startswith("age") else text)
        extra = {EXTRA: record[EXTRA].strip()} if record[EXTRA].strip() else {}
        rows.append((*values, json.dumps(extra), "expected", created))
    columns = ["loan_id", *COLUMNS.values(), "extra", "status", "created_at"]
    names = ", ".join(columns)
    marks = ", ".join("?" * (len(COLUMNS) + 4))
    # the rows stated as one JSON document and hashed, as the import's ledger event states them
    stated = json.dumps(
        {n: dict(zip(columns, row, strict=True)) for n, row in enumerate(rows)},
        sort_keys=True,
        separators=(",", ":"),
    )
    digest = hashlib.sha256(stated.encode("utf-8")).hexdigest()
    connection = sqlite3.connect(path)
    with connection:
        connection.executemany(f"INSERT INTO specimen ({names}) VALUES ({marks})", rows)
        connection.execute("CREATE TEMP TABLE IF NOT EXISTS stated (payload TEXT, hash TEXT)")
        connection.execute("INSERT INTO stated VALUES (?, ?)", (stated, digest))
    connection.close()


def manifest_figure(cached: Path, workdir: Path, repeat: int) -> Figure:
    work = workdir / "manifest-work.sqlite"
    shutil.copyfile(cached, work)
    settle_writes()  # the copy's pages on disk first, so no timed commit waits behind them
    clock = StepClock(END)
    db = open_database(work, clock=clock, upgrade=False)
    db.keyring = bench_keyring()  # the synthetic operators sign
    content = manifest_csv()
    best, bare = float("inf"), float("inf")
    made: list[tuple[int, int]] = []
    try:
        for n in range(max(repeat, 1)):
            ours, theirs = (_new_loan(db, f"SYN-MANIFEST-{n:02d}{side}") for side in "AB")
            request = {
                "loan": format_id(Kind.LOAN, ours),
                "filename": "synthetic-list.csv",
                "content": content,
            }
            outcome: list[manifests.ManifestOutcome] = []
            importing = partial(manifests.import_manifest, db, FOUNDER["code"], request)
            best = min(best, timed(lambda: outcome.append(importing())))  # noqa: B023
            if len(outcome[0].created) != ROWS or outcome[0].event_seq is None:
                raise RuntimeError("the manifest import did not create every row")
            stamp = clock.now.strftime("%Y-%m-%d %H:%M:%S.%f")
            bare = min(bare, timed(partial(_floor, work, theirs, content, stamp)))
            made.append((ours, theirs))
    finally:
        db.close()
    figure = Figure(
        "manifest",
        f"manifest import of {ROWS:,} rows",
        "s",
        best,
        bare,
        "csv module + raw sqlite3 executemany + the rows as one hashed JSON document",
        Target(ratio_most=3.0),
    )
    figure.compared = "the same rows written"
    _same_rows(figure, work, *made[0])
    for suffix in ("", "-wal", "-shm"):
        Path(str(work) + suffix).unlink(missing_ok=True)
    return figure


def _new_loan(db: Any, reference: str) -> int:
    terms = {"permitted_tissues": "enamel", "due_on": "2030-01-01"}
    done = lending.add_loan(
        db,
        FOUNDER["code"],
        {
            "lender": format_id(Kind.LENDER, 1),
            "reference": reference,
            "title": "Synthetic manifest benchmark loan",
            "borrower": "Synthetic Borrower 01",
            "terms": terms,
        },
    )
    return int(done.item.id.split("-")[1])


def _same_rows(figure: Figure, path: Path, ours: int, theirs: int) -> None:
    columns = ", ".join([*COLUMNS.values(), "extra", "status"])
    connection = sqlite3.connect(path)
    try:
        query = f"SELECT {columns} FROM specimen WHERE loan_id = ? ORDER BY id"
        a = connection.execute(query, (ours,)).fetchall()
        b = connection.execute(query, (theirs,)).fetchall()
    finally:
        connection.close()
    if a != b or len(a) != ROWS:
        figure.problems.append(f"the floor wrote other rows ({len(a)} vs {len(b)})")
