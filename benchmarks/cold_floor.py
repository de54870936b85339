"""Whole-process floors: the least a fresh program could do for each everyday command.

``python -m benchmarks.cold_floor WHAT DATABASE ARGS`` starts a fresh interpreter that imports
only the standard library (``sqlite3``, ``json``, ``statistics``) and this package's SQL, reads
the same database as the ``tracker`` command it stands beside, does the same job by hand and
prints what a person would read. Its last line is a JSON answer the benchmark holds tracker's
output against (the IDs, references and counts both must show).

DATABASE is a SQLite file, or a PostgreSQL URL: then the floor talks to the server with the
raw driver tracker uses (psycopg, imported only then) and runs the same SQL text, its ``?``
marks written as psycopg's ``%s`` (:class:`_Psycopg`), so both backends' floors do one job.
"""

from __future__ import annotations

import json
import sqlite3
import statistics
import sys
from collections import defaultdict
from collections.abc import Callable, Sequence
from pathlib import Path
from types import TracebackType
from typing import Any, Protocol

from benchmarks.floor_sql import LINEAGE_FLOOR, RECONCILE_SQL


class Rows(Protocol):
    def fetchone(self) -> Any: ...

    def fetchall(self) -> list[Any]: ...


class Connection(Protocol):
    """What the floors ask of a connection: ``sqlite3``'s, or psycopg's through ``_Psycopg``."""

    def execute(self, sql: str, parameters: Sequence[Any] = ..., /) -> Rows: ...

    def executemany(self, sql: str, rows: Sequence[Sequence[Any]], /) -> object: ...

    def commit(self) -> None: ...

    def close(self) -> None: ...

    def __enter__(self) -> Connection: ...

    def __exit__(
        self,
        kind: type[BaseException] | None,
        error: BaseException | None,
        tb: TracebackType | None,
        /,
    ) -> object: ...


class _Psycopg:
    """A psycopg connection taking the floors' SQL as written for ``sqlite3``: each ``?``
    becomes ``%s`` (the SQL holds no other ``?`` and no ``%``). A job that only reads runs
    read-only transactions, as the SQLite floor opens its file read-only."""

    def __init__(self, url: str, writes: bool) -> None:
        import psycopg

        self.connection = psycopg.connect(url.replace("postgresql+psycopg:", "postgresql:", 1))
        self.connection.read_only = not writes

    def execute(self, sql: str, parameters: Sequence[Any] = (), /) -> Rows:
        return self.connection.execute(sql.replace("?", "%s"), parameters or None)

    def executemany(self, sql: str, rows: Sequence[Sequence[Any]], /) -> object:
        with self.connection.cursor() as cursor:
            cursor.executemany(sql.replace("?", "%s"), rows)
        return None

    def commit(self) -> None:
        self.connection.commit()

    def close(self) -> None:
        self.connection.close()

    def __enter__(self) -> _Psycopg:
        return self

    def __exit__(
        self,
        kind: type[BaseException] | None,
        error: BaseException | None,
        tb: TracebackType | None,
        /,
    ) -> None:
        self.connection.__exit__(kind, error, tb)  # commit (rollback on error), then close


def _connect(database: str, writes: bool = False) -> Connection:
    """The database's own driver: psycopg for a PostgreSQL URL, else ``sqlite3`` on the file
    (read-only unless the job writes)."""
    if database.startswith("postgresql"):
        return _Psycopg(database, writes)
    if writes:
        return sqlite3.connect(database)
    return sqlite3.connect(f"file:{database}?mode=ro", uri=True)


def lookup(path: str, table: str, number: str) -> dict[str, object]:
    """The row by primary key, and its chain up to the specimen and the loan (one join per
    hop, as a hand-written program would)."""
    chain = {
        "cut": "SELECT position_id FROM cut WHERE id = ?",
        "batch_position": "SELECT aliquot_id FROM batch_position WHERE id = ?",
        "aliquot": "SELECT solution_id FROM aliquot WHERE id = ?",
        "solution": "SELECT powder_id FROM solution WHERE id = ?",
        "powder": "SELECT specimen_id FROM powder WHERE id = ?",
    }
    nexts = {
        "cut": "batch_position",
        "batch_position": "aliquot",
        "aliquot": "solution",
        "solution": "powder",
        "powder": "specimen",
    }
    with _connect(path) as connection:
        at, key = table, int(number)
        while at != "specimen":
            (key,) = connection.execute(chain[at], (key,)).fetchone()
            at = nexts[at]
        catalog, loan = connection.execute(
            "SELECT s.catalog_number, l.reference FROM specimen s JOIN loan l "
            "ON l.id = s.loan_id WHERE s.id = ?",
            (key,),
        ).fetchone()
    print(f"{table} {number}: specimen {catalog}, loan {loan}")
    return {"tokens": [catalog, loan]}


def show(path: str, number: str, ref: str) -> dict[str, object]:
    """The specimen's rows level by level and its history, printed one line each."""
    with _connect(path) as connection:
        rows = [connection.execute(sql, (int(number),)).fetchall() for sql in LINEAGE_FLOOR]
        history = connection.execute(
            "SELECT seq, at, operator, action, object_ref FROM custody_event "
            "WHERE object_ref = ? OR parent_ref = ? ORDER BY seq",
            (ref, ref),
        ).fetchall()
    for level in rows:
        for row in level:
            print(" ".join(str(cell) for cell in row[:6]))
    for event in history:
        print(" ".join(str(cell) for cell in event))
    ids = {
        "powder": [r[0] for r in rows[1]],
        "solution": [r[0] for r in rows[2]],
        "aliquot": [r[0] for r in rows[4]],
    }
    return {"ids": ids, "events": len(history)}


def reconcile(path: str, loan: str = "", open_only: str = "") -> dict[str, object]:
    """The same sums and closure tests per specimen, one aligned line each, and per loan."""
    with _connect(path) as connection:
        rows = connection.execute(RECONCILE_SQL).fetchall()
        status = dict(connection.execute("SELECT reference, status FROM loan").fetchall())
    if loan:
        rows = [r for r in rows if r[4] == loan]
    if open_only:
        rows = [r for r in rows if status[r[4]] == "open"]
    per_loan: dict[str, float] = defaultdict(float)
    for row in rows:
        per_loan[row[4]] += float(row[6])
        if not open_only:
            print(f"{row[4]:<16} {row[2]:<24} {row[3]:<12} {float(row[6]):>10.3f} mg")
    for reference, drilled in per_loan.items():
        print(f"{reference:<16} {drilled:>12.3f} mg drilled")
    return {"tokens": sorted(per_loan), "specimens": [r[1] for r in rows]}


def report(path: str, loan: str, out: str) -> dict[str, object]:
    """The loan's specimens, powders and results read and written as a text file."""
    with _connect(path) as connection:
        specimens = connection.execute(
            "SELECT s.id, s.catalog_number, s.status FROM specimen s JOIN loan l "
            "ON l.id = s.loan_id WHERE l.reference = ? ORDER BY s.id",
            (loan,),
        ).fetchall()
        ids = [row[0] for row in specimens]
        marks = ",".join("?" * len(ids))
        powders = connection.execute(
            f"SELECT specimen_id, id, mass_mg, status FROM powder WHERE specimen_id IN ({marks})",
            ids,
        ).fetchall()
    lines = [f"Return report, loan {loan}"]
    lines += [" ".join(str(cell) for cell in row) for row in (*specimens, *powders)]
    Path(out).write_text("\n".join(lines) + "\n", encoding="utf-8")
    print(f"wrote {out}")
    return {"specimens": len(specimens)}


def reduce(path: str, session: str) -> dict[str, object]:
    """Each run divided by the mean of its neighbouring standards (found by search), the
    replicates averaged per target, and the results written with ``executemany``."""
    from bisect import bisect_left, bisect_right

    connection = _connect(path, writes=True)
    runs = connection.execute(
        "SELECT run_order, role, cut_id, CAST(ratios AS TEXT) FROM measurement "
        "WHERE session_id = ? AND excluded_reason IS NULL ORDER BY run_order",
        (int(session),),
    ).fetchall()
    standards = [(r[0], json.loads(r[3])) for r in runs if r[1] == "standard"]
    order = [run for run, _ in standards]
    values: dict[tuple[int, str], list[float]] = defaultdict(list)
    for run, _role, cut, ratios in runs:
        if cut is None:
            continue
        before, after = bisect_left(order, run), bisect_right(order, run)
        for ratio, value in json.loads(ratios).items():
            mean = (standards[before - 1][1][ratio] + standards[after][1][ratio]) / 2
            values[(cut, ratio)].append((value / mean - 1) * 1000)
    rows = [
        (cut, ratio, statistics.fmean(v), statistics.stdev(v) if len(v) > 1 else None, len(v))
        for (cut, ratio), v in values.items()
    ]
    connection.execute(
        "CREATE TEMP TABLE floor_result (cut INTEGER, ratio TEXT, delta DOUBLE PRECISION, "
        "sd DOUBLE PRECISION, n INTEGER)"
    )
    connection.executemany("INSERT INTO floor_result VALUES (?, ?, ?, ?, ?)", rows)
    connection.commit()
    connection.close()
    for row in rows:
        print(" ".join(str(cell) for cell in row))
    return {"cuts": sorted({row[0] for row in rows}), "results": len(rows)}


def main(argv: list[str]) -> int:
    jobs: dict[str, Callable[..., dict[str, object]]] = {
        "lookup": lookup,
        "show": show,
        "reconcile": reconcile,
        "report": report,
        "reduce": reduce,
    }
    answer = jobs[argv[1]](*argv[2:])
    print(json.dumps(answer), flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
