"""What the reliability tests measured in this run, printed as one table at the end.

Each heavy test calls :func:`record` with its size (processes, attempts, kills, fuzz cases)
and what it found; ``tests/reliability/conftest.py`` prints the rows after the run, so the
README's reliability table is copied from a real run rather than written by hand.
"""

from __future__ import annotations

from dataclasses import dataclass

ROWS: dict[str, Row] = {}


@dataclass(frozen=True)
class Row:
    test: str
    size: str
    found: str


def record(test: str, size: str, found: str) -> None:
    """Keep one line of the table (a test run twice, e.g. per backend, keeps each)."""
    ROWS[test] = Row(test, size, found)


def table() -> str:
    lines = ["| test | size | found |", "|---|---|---|"]
    lines += [f"| {r.test} | {r.size} | {r.found} |" for r in sorted(ROWS.values(), key=_order)]
    return "\n".join(lines)


def _order(row: Row) -> str:
    return row.test
