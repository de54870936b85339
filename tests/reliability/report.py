"""What the reliability tests measured in this run, printed as one table at the end.

Each heavy test calls :func:`record` with its size (processes, attempts, kills, fuzz cases)
and what it found; the suite prints the rows after the run (``tests/conftest.py``), and a
run that passed writes them into docs/reliability.md when asked to (``--reliability-page``),
so the page's table is always a real run's rather than written by hand.
"""

from __future__ import annotations

import json
import subprocess
from dataclasses import asdict, dataclass
from pathlib import Path

ROWS: dict[str, Row] = {}

# The page's table sits between these two lines; the writer replaces only what is between.
BEGIN = "<!-- reliability table: written by the test run, do not edit by hand -->"
END = "<!-- end of the reliability table -->"


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


def with_table(page: str, new_table: str) -> str:
    """The page with the table between its two marker lines replaced; the prose around it
    (how the tests work, the caps) is kept as written."""
    before, begin, rest = page.partition(BEGIN + "\n")
    _, end, after = rest.partition(END)
    if not begin or not end:
        raise ValueError(f"the page has no table between {BEGIN!r} and {END!r}")
    return f"{before}{BEGIN}\n{new_table}\n{END}{after}"


def measured_code() -> str:
    """Which code the rows measured: the checkout's commit, and whether it had changes."""
    git = ["git", "-C", str(Path(__file__).resolve().parent)]
    head = subprocess.run([*git, "rev-parse", "--short", "HEAD"], capture_output=True, text=True)
    if head.returncode != 0:
        return "Measured outside a git checkout."
    changed = subprocess.run([*git, "status", "--porcelain"], capture_output=True, text=True)
    dirty = " with uncommitted changes" if changed.stdout.strip() else ""
    return f"Measured by the tests of commit {head.stdout.strip()}{dirty}."


def write_page(path: Path) -> None:
    """Write this run's table, and the commit it measured, into the page at ``path``."""
    page = path.read_text(encoding="utf-8")
    path.write_text(with_table(page, f"{measured_code()}\n\n{table()}"), encoding="utf-8")


def save_rows(path: Path) -> None:
    """Keep this run's rows for a later run (the everyday suite's, for the slow suite's page)."""
    path.write_text(json.dumps([asdict(row) for row in ROWS.values()]), encoding="utf-8")


def load_rows(path: Path) -> None:
    """Take the rows an earlier run kept; this run's own rows of the same test replace them."""
    if path.exists():
        for row in json.loads(path.read_text(encoding="utf-8")):
            ROWS.setdefault(row["test"], Row(**row))
