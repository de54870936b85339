"""The bulk executor writes what the services write: every table, row for row, and the ledger.

The same small plan (three loans: two returned, one still open, a showcase specimen, column
batches, instrument sessions with duplicated runs) is run once through the real services, one
call per action, and once through the bulk executor. The two SQLite files must hold identical
rows in every table — custody events with their hashes included — and the bulk database must
verify and reconcile like any database the services built.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import create_engine, select, text
from sqlalchemy.engine import make_url

from benchmarks.generate import Built, build
from benchmarks.shape import Shape, shape_for
from tracker.db.database import open_database
from tracker.domain.base import Base
from tracker.services.ledger import audit, chain
from tracker.services.read import reconcile

pytestmark = pytest.mark.slow  # builds and compares whole chains on both backends

SHAPE = shape_for(0.002, loans=3)


def _rows(path: str) -> dict[str, list[Any]]:
    """Every table's rows in primary-key order, read with plain SQLAlchemy Core."""
    engine = create_engine(f"sqlite:///{path}")
    try:
        with engine.connect() as connection:
            return {
                table.name: list(
                    connection.execute(select(table).order_by(*table.primary_key.columns))
                )
                for table in Base.metadata.sorted_tables
            } | {"alembic_version": list(connection.execute(text("SELECT * FROM alembic_version")))}
    finally:
        engine.dispose()


@pytest.fixture(scope="module")
def both(tmp_path_factory: pytest.TempPathFactory) -> tuple[Built, Built]:
    folder = tmp_path_factory.mktemp("equivalence")
    by_services = build(folder / "services.sqlite", SHAPE, "services")
    by_bulk = build(folder / "bulk.sqlite", SHAPE, "bulk")
    return by_services, by_bulk


def test_the_plan_covers_every_action_and_both_kinds_of_loan(both: tuple[Built, Built]) -> None:
    rows = _rows(both[1].target)
    statuses = {row.status for row in rows["loan"]}
    assert statuses == {"open", "returned"}
    actions = {row.action.split(".")[0] for row in rows["custody_event"]}
    for family in (
        "specimen",
        "powder",
        "solution",
        "aliquot",
        "batch",
        "cut",
        "item",
        "session",
        "loan",
        "concentration",
    ):
        assert family in actions, family
    assert {row.role for row in rows["measurement"]} == {"standard", "sample", "reference", "blank"}
    assert rows["result"], "sessions were reduced"


def test_every_table_holds_the_same_rows(both: tuple[Built, Built]) -> None:
    by_services, by_bulk = (_rows(b.target) for b in both)
    assert by_services.keys() == by_bulk.keys()
    for table, rows in by_services.items():
        assert rows == by_bulk[table], f"table {table} differs"
    # not vacuous: the plan wrote a real database
    assert len(by_services["custody_event"]) == both[0].steps + 1  # + the ledger's opening
    assert len(by_services["specimen"]) == SHAPE.total("specimens")
    assert len(by_services["powder"]) == SHAPE.total("powders")
    assert len(by_services["aliquot"]) == SHAPE.total("aliquots")


def test_the_chains_end_on_the_same_hash(both: tuple[Built, Built]) -> None:
    by_services, by_bulk = both
    assert (by_services.events, by_services.head_hash) == (by_bulk.events, by_bulk.head_hash)


def test_the_bulk_database_verifies_and_reconciles(both: tuple[Built, Built]) -> None:
    bulk = open_database(both[1].target)
    services = open_database(both[0].target)
    try:
        report = chain.verify(bulk)
        assert report.ok and report.events == both[1].events
        books = audit.audit(bulk)  # every row the bulk writer wrote is what its facts state
        assert books.ok and books.coverage.complete and books.rows > 0
        lines = reconcile.reconcile(bulk)
        assert [line.model_dump() for line in lines] == [
            line.model_dump() for line in reconcile.reconcile(services)
        ]
        flags = {flag for line in lines for s in line.specimen_lines for flag in s.flags}
        # every vial that left the lab was weighed and closes exactly
        assert not flags & {"unaccounted material", "missing weighing", "over limit"}
        assert sum(line.drilled_mg for line in lines) > 0
    finally:
        bulk.close()
        services.close()


def test_open_loans_only_are_the_open_lines_of_the_whole_lab(both: tuple[Built, Built]) -> None:
    """The overview's open-loans path reads only their rows; the numbers must not change."""
    db = open_database(both[1].target)
    try:
        every = reconcile.reconcile(db, specimens=False)
        only = reconcile.reconcile(db, specimens=False, open_only=True)
        detailed = reconcile.reconcile(db, open_only=True)
    finally:
        db.close()
    whole = [line for line in every if line.status == "open"]
    assert 0 < len(whole) < len(every)  # the plan has returned loans to leave out
    assert sum(line.drilled_mg for line in whole) > 0
    assert [line.model_dump() for line in only] == [line.model_dump() for line in whole]
    assert [line.id for line in detailed] == [line.id for line in whole]
    listed = sum(len(line.specimen_lines) for line in detailed)
    assert listed == sum(line.specimens for line in whole)


def _shape_rows(shape: Shape) -> int:
    from benchmarks.plan import plan_steps

    return sum(
        step.args["content"].count(b"\n") - 1
        for step in plan_steps(shape, 1)
        if step.do == "session_import"
    )


def test_scale_one_is_a_busy_labs_decade() -> None:
    """The issue's numbers, counted from the plan itself (nothing is executed)."""
    from collections import Counter

    from benchmarks.plan import plan_steps
    from benchmarks.shape import SEED

    shape = shape_for(1.0)
    steps = Counter(step.do for step in plan_steps(shape, SEED))
    assert steps["loan"] == 300
    assert steps["specimen"] == 20_000
    assert steps["drill"] == steps["dissolve"] == 50_000
    assert steps["aliquot"] == 100_000
    assert steps["batch"] == 2_000
    assert sum(steps.values()) + 1 >= 1_000_000  # every step is one event, plus the opening
    assert _shape_rows(shape) == 60_000


@pytest.mark.postgresql
def test_the_bulk_executor_writes_the_same_chain_on_postgresql(
    pg_server: str, both: tuple[Built, Built]
) -> None:
    """Both executors on PostgreSQL: the same chain (events there record the database login,
    so it differs from SQLite's by exactly that), and the same number of events as SQLite."""
    names = [f"tracker_bench_{os.getpid()}_{executor}" for executor in ("services", "bulk")]
    admin = create_engine(
        make_url(pg_server).set(database="postgres"), isolation_level="AUTOCOMMIT"
    )
    with admin.connect() as connection:
        for name in names:
            connection.execute(text(f"DROP DATABASE IF EXISTS {name}"))
            connection.execute(text(f"CREATE DATABASE {name}"))
    urls = [
        make_url(pg_server).set(database=name).render_as_string(hide_password=False)
        for name in names
    ]
    try:
        by_services = build(urls[0], SHAPE, "services")
        built = build(urls[1], SHAPE, "bulk")
        assert (built.events, built.head_hash) == (by_services.events, by_services.head_hash)
        assert built.events == both[0].events
        db = open_database(urls[1])
        try:
            assert chain.verify(db).ok
        finally:
            db.close()
    finally:
        with admin.connect() as connection:
            for name in names:
                connection.execute(text(f"DROP DATABASE IF EXISTS {name} WITH (FORCE)"))
        admin.dispose()


def test_built_files_are_kept_where_asked(both: tuple[Built, Built]) -> None:
    assert all(Path(b.target).exists() for b in both)
