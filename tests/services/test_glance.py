"""The first screen's glance says exactly what the services say, or says nothing.

The glance (tracker/services/glance.py) reads the open loans with the standard library's
sqlite3 and SQL stored as text, before SQLAlchemy loads. These tests hold the stored SQL to a
fresh compilation of the services' statements, the glance's lines to reconcile's on the
demo on several days (before and after an amendment takes effect, past due dates), and the
glance to silence on anything it must not read. The demo's loans are invented.
"""

from __future__ import annotations

import shutil
import sqlite3
from datetime import UTC, date, datetime
from pathlib import Path

import pytest

from tracker.db import migrate
from tracker.db.database import open_database
from tracker.io.demo import build_demo
from tracker.services import browse, glance_sql, glance_statements, reconcile
from tracker.services.glance import read_glance, sqlite_file, start_glance
from tracker.services.loan_rules import OverviewLine

SHOWN = list(OverviewLine.__slots__)  # every field the overview draws


@pytest.fixture(scope="module")
def demo(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("glance") / "demo.sqlite"
    build_demo(path)
    return path


def test_the_stored_sql_is_what_the_services_statements_compile_to() -> None:
    stored = {name: getattr(glance_sql, name) for name in glance_statements.statements()}
    assert stored == glance_statements.compiled(), (
        "regenerate with: python -m tracker.services.glance_statements"
    )
    assert glance_sql.HEAD == migrate.HEAD


# 2026-03-10: before the demo's allowance amendment (effective 2026-06-01) takes effect;
# 2026-05-15: still before it; 2026-12-01: after it, one loan due within 30 days;
# 2027-06-01: every open loan overdue.
@pytest.mark.parametrize(
    "today", [date(2026, 3, 10), date(2026, 5, 15), date(2026, 12, 1), date(2027, 6, 1)]
)
def test_the_glance_says_what_reconcile_says(demo: Path, today: date) -> None:
    glance = read_glance(demo, today)
    db = open_database(demo, clock=lambda: datetime.combine(today, datetime.min.time(), UTC))
    try:
        lines = reconcile.reconcile(db, specimens=False, open_only=True)
        missing = browse.results_missing_counts(db, open_only=True)
    finally:
        db.close()
    assert glance is not None and len(lines) == 2  # the demo's two open loans
    assert [[getattr(g, name) for name in SHOWN] for g in glance.lines] == [
        [getattr(line, name) for name in SHOWN] for line in lines
    ]
    assert glance.missing == missing


def test_the_amendment_in_force_is_the_one_the_glance_uses(demo: Path) -> None:
    before, after = (read_glance(demo, d) for d in (date(2026, 5, 15), date(2026, 12, 1)))
    assert before is not None and after is not None
    limits = [{g.reference: g.max_total_mass_mg for g in x.lines} for x in (before, after)]
    assert (limits[0]["KF-2026-014"], limits[1]["KF-2026-014"]) == (15.0, 17.0)


def test_no_glance_of_what_it_must_not_read(demo: Path, tmp_path: Path) -> None:
    assert sqlite_file("postgresql://lab@db.example/tracker") is None
    assert sqlite_file(str(tmp_path / "absent.sqlite")) is None
    assert start_glance(str(tmp_path / "absent.sqlite"), date(2026, 12, 1)) is None
    not_a_database = tmp_path / "notes.sqlite"
    not_a_database.write_bytes(b"a text file, not a database\n" * 100)
    assert read_glance(not_a_database, date(2026, 12, 1)) is None
    older = tmp_path / "older.sqlite"
    shutil.copyfile(demo, older)
    with sqlite3.connect(older) as connection:
        connection.execute("UPDATE alembic_version SET version_num = ?", (migrate.REVISIONS[-2],))
    connection.close()
    assert read_glance(older, date(2026, 12, 1)) is None  # awaiting its upgrade
    odd = tmp_path / "odd.sqlite"
    shutil.copyfile(demo, odd)
    with sqlite3.connect(odd) as connection:  # a disposition no version of tracker writes
        connection.execute("UPDATE loan_terms SET powder_disposition = 'sell'")
    connection.close()
    assert read_glance(odd, date(2026, 12, 1)) is None  # no glance, and no traceback


def test_the_glance_writes_nothing(demo: Path, tmp_path: Path) -> None:
    copy = tmp_path / "demo.sqlite"
    shutil.copyfile(demo, copy)
    before = copy.read_bytes()
    glancer = start_glance(f"sqlite:///{copy}", date(2026, 12, 1))
    assert glancer is not None
    found = glancer.result()
    assert found is not None and len(found.lines) == 2
    assert copy.read_bytes() == before
