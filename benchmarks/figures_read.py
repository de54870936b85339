"""Read figures: reconcile every loan, look up scanned IDs, show a specimen's lineage.

Floors run hand-written SQL on the driver's own connection (``sqlite3`` or psycopg), with
no ORM, no models and no rules, and fetch the same numbers or rows the service works from.
"""

from __future__ import annotations

import math
import random
import time
from functools import partial
from typing import Any

from benchmarks.floor_sql import LINEAGE_FLOOR, RECONCILE_SQL
from benchmarks.measure import Figure, Target, best_of, median, percentile, timed
from tracker.db.database import Database
from tracker.domain.ids import Kind, format_id
from tracker.services.labels import handling
from tracker.services.read import lineage, reconcile


def raw_rows(db: Database, sql: str, params: tuple[Any, ...] = ()) -> list[Any]:
    """Rows from the driver's own cursor (sqlite3 or psycopg), bypassing SQLAlchemy."""
    connection = db.engine.raw_connection()
    try:
        cursor = connection.cursor()
        cursor.execute(sql.replace("?", "%s") if db.backend == "postgresql" else sql, params)
        rows = list(cursor.fetchall())
        cursor.close()
        return rows
    finally:
        connection.close()


def reconcile_figure(db: Database, repeat: int) -> Figure:
    kept: dict[str, Any] = {}

    def measured() -> float:
        return timed(lambda: kept.update(lines=reconcile.reconcile(db)))

    def floor() -> float:
        return timed(lambda: kept.update(rows=raw_rows(db, RECONCILE_SQL)))

    took, bare = best_of(repeat, measured, floor)
    lines: list[reconcile.LoanLine] = kept["lines"]
    floor_name = "one hand-written SQL aggregate: the same sums and closure tests"
    target = Target(most=0.5, ratio_most=2.0)
    title = f"reconcile all {len(lines)} loans"
    figure = Figure("reconcile", title, "s", took, bare, floor_name, target)
    figure.compared = "each specimen's drilled mass, open books and overrides"
    _cross_check(figure, lines, kept["rows"])
    return figure


def _cross_check(figure: Figure, lines: list[reconcile.LoanLine], rows: list[Any]) -> None:
    """The floor must have computed the same thing: per specimen the drilled mass, and
    which specimens have books that do not close (unaccounted material or a missing
    weighing) or an override."""
    ours = {s.id: s for line in lines for s in line.specimen_lines}
    disagree = []
    for row in rows:
        mine = ours.get(format_id(Kind.SPECIMEN, row[1]))
        open_books = (
            bool({"unaccounted material", "missing weighing"} & set(mine.flags)) if mine else None
        )
        if (
            mine is None
            or not math.isclose(mine.drilled_mg, float(row[6]), rel_tol=1e-9, abs_tol=1e-12)
            or open_books != bool(row[11])
            or ("override used" in mine.flags) != bool(row[12])
        ):
            disagree.append(row[2])
    if disagree or len(rows) != len(ours):
        figure.problems.append(
            f"floor disagrees on {len(disagree)} specimens (e.g. {disagree[:3]}); "
            f"{len(rows)} rows vs {len(ours)} lines"
        )
    drilled = sum(line.drilled_mg for line in lines)
    flagged = sum(bool(row[11]) for row in rows)
    figure.notes.append(
        f"{len(rows)} specimens, {drilled:.1f} mg drilled in all, {flagged} with open books"
    )


_SCANNED_KINDS = {
    Kind.SPECIMEN: "specimen",
    Kind.POWDER: "powder",
    Kind.SOLUTION: "solution",
    Kind.ALIQUOT: "aliquot",
    Kind.CUT: "cut",
}


def sample_ids(db: Database, count: int, seed: int = 7) -> list[tuple[Kind, int]]:
    """Random labelled items across the kinds a scanner meets at the bench."""
    rng = random.Random(seed)
    tops = {
        kind: int(raw_rows(db, f"SELECT MAX(id) FROM {table}")[0][0] or 0)
        for kind, table in _SCANNED_KINDS.items()
    }
    kinds = [kind for kind, top in tops.items() if top]
    return [
        (kind, rng.randint(1, tops[kind])) for kind in (rng.choice(kinds) for _ in range(count))
    ]


def scanned(kind: Kind, number: int, variant: int) -> str:
    """The ID as a scanner or a person might type it: as printed, lower case, no hyphens."""
    text = format_id(kind, number)
    return [text, text.lower(), text.replace("-", "")][variant % 3]


def lookup_figure(db: Database, count: int = 1000, warm: int = 20, passes: int = 3) -> Figure:
    """The p99 of ``count`` scans, alternating with the floor's fetch; the median of
    ``passes`` such p99s, so one busy moment of a shared machine does not decide it."""
    picks = sample_ids(db, count + warm)
    for kind, number in picks[:warm]:
        handling.read_scan(db, format_id(kind, number))
    p99s: list[float] = []
    bare_p99s: list[float] = []
    wrong: list[str] = []
    for _ in range(passes):
        took: list[float] = []
        bare: list[float] = []
        for n, (kind, number) in enumerate(picks[warm:]):
            text = scanned(kind, number, n)
            started = time.perf_counter()
            found = handling.read_scan(db, text)
            took.append(time.perf_counter() - started)
            if found.id != format_id(kind, number):
                wrong.append(text)
            sql = f"SELECT * FROM {_SCANNED_KINDS[kind]} WHERE id = ?"
            bare.append(timed(partial(raw_rows, db, sql, (number,))))
        p99s.append(percentile(took, 0.99))
        bare_p99s.append(percentile(bare, 0.99))
    figure = Figure(
        "lookup",
        f"scanned-ID lookup, p99 of {count} (median of {passes} passes)",
        "ms",
        median(p99s) * 1000,
        median(bare_p99s) * 1000,
        "the row by primary key, raw driver",
        Target(most=5.0),
    )
    figure.compared = "each scan finds the row the floor fetched"
    if wrong:
        figure.problems.append(f"{len(wrong)} scans found another item, e.g. {wrong[:3]}")
    figure.notes.append(f"p99 of each pass: {', '.join(f'{p * 1000:.2f}' for p in p99s)} ms")
    return figure


def showcase_specimen(db: Database) -> tuple[str, int]:
    """The first specimen with 50 descendants (powders, solutions, aliquots, columns, cuts)."""
    rows = raw_rows(
        db,
        """
        SELECT p.specimen_id, COUNT(DISTINCT p.id) + COUNT(DISTINCT so.id)
               + COUNT(DISTINCT a.id) + COUNT(DISTINCT bp.id) + COUNT(DISTINCT c.id)
        FROM powder p LEFT JOIN solution so ON so.powder_id = p.id
        LEFT JOIN aliquot a ON a.solution_id = so.id
        LEFT JOIN batch_position bp ON bp.aliquot_id = a.id
        LEFT JOIN cut c ON c.position_id = bp.id
        WHERE p.specimen_id IN (SELECT specimen_id FROM powder GROUP BY specimen_id
                                HAVING COUNT(*) >= 4)
        GROUP BY p.specimen_id ORDER BY p.specimen_id""",
    )
    for specimen, count in rows:
        if count == 50:
            return format_id(Kind.SPECIMEN, specimen), count
    best = max(rows, key=lambda r: r[1]) if rows else (1, 0)
    return format_id(Kind.SPECIMEN, best[0]), int(best[1])


def _descendants(node: lineage.Node) -> int:
    return sum(1 + _descendants(child) for child in node.children)


def lineage_figure(db: Database, runs: int = 20) -> Figure:
    ref, count = showcase_specimen(db)
    number = int(ref.split("-")[1])
    shown = lineage.show_item(db, ref)

    def floor() -> None:
        for sql in LINEAGE_FLOOR:
            raw_rows(db, sql, (number,))
        raw_rows(
            db,
            "SELECT * FROM custody_event WHERE object_ref = ? OR parent_ref = ? ORDER BY seq",
            (ref, ref),
        )

    took: list[float] = []
    bare: list[float] = []
    for _ in range(runs):  # alternating, so a busy moment weighs on both alike
        took.append(timed(lambda: lineage.show_item(db, ref)))
        bare.append(timed(floor))
    figure = Figure(
        "lineage",
        f"lineage of a specimen with {count} descendants (median)",
        "ms",
        median(took) * 1000,
        median(bare) * 1000,
        "its rows level by level and its history, raw driver",
        Target(most=50.0),
    )
    found = _descendants(shown.item)
    if found != count:
        figure.problems.append(f"the tree shows {found} descendants, the SQL counts {count}")
    figure.notes.append(f"{ref}: {found} descendants, {len(shown.history)} events in its history")
    figure.compared = "the number of descendants"
    return figure
