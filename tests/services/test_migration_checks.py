"""Revision 0011 (the schema's rules): what an upgrade keeps, and what stops it.

SQLite adds a CHECK only by rebuilding the table, which drops its triggers and indexes; the
revision makes them again from their own text. A stored row that breaks a new rule stops
the upgrade with one line, and the database stays exactly as it was.
"""

from __future__ import annotations

import os
import shutil
import sqlite3
from collections.abc import Iterator
from decimal import Decimal
from itertools import count
from pathlib import Path

import pytest
from sqlalchemy import Connection, create_engine, text
from sqlalchemy.engine import make_url

from tests.conftest import _admin
from tracker.db import migrate
from tracker.db.database import open_database, upgrade_database
from tracker.db.engine import build_engine, create_private_file
from tracker.domain.errors import RuleViolation
from tracker.services.ledger.audit import audit

BEFORE = "0010_logins"
RULES = "0011_checks"  # the revision these tests are about (later ones add triggers)
_names = count()


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgresql)])
def empty_url(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[str]:
    """An empty database on the parametrised backend (no revision applied)."""
    if request.param == "sqlite":
        path = tmp_path / "old.sqlite"
        create_private_file(path)
        yield f"sqlite:///{path}"
        return
    server = request.getfixturevalue("pg_server")
    name = f"tracker_rules_{os.getpid()}_{next(_names)}"
    admin = _admin(server)
    with admin.connect() as connection:
        connection.execute(text(f"CREATE DATABASE {name}"))
    yield make_url(server).set(database=name).render_as_string(hide_password=False)
    with admin.connect() as connection:
        connection.execute(text(f"DROP DATABASE IF EXISTS {name} WITH (FORCE)"))
    admin.dispose()


def _at(url: str, revision: str) -> None:
    engine = build_engine(url)
    try:
        migrate.upgrade(engine, revision)
    finally:
        engine.dispose()


def _triggers(connection: Connection) -> dict[str, str]:
    """Every trigger of our tables by name, as the database states it."""
    if connection.dialect.name == "sqlite":
        found = connection.execute(
            text("SELECT name, sql FROM sqlite_master WHERE type = 'trigger'")
        )
    else:
        found = connection.execute(
            text(
                "SELECT tgname, pg_get_triggerdef(oid) FROM pg_trigger "
                "WHERE NOT tgisinternal AND tgrelid::regclass::text NOT LIKE 'pg_%'"
            )
        )
    return {str(name): str(sql) for name, sql in found}


def _indexes(connection: Connection) -> dict[str, str]:
    if connection.dialect.name == "sqlite":
        found = connection.execute(
            text("SELECT name, sql FROM sqlite_master WHERE type = 'index' AND sql IS NOT NULL")
        )
    else:
        found = connection.execute(
            text("SELECT indexname, indexdef FROM pg_indexes WHERE schemaname = current_schema()")
        )
    return {str(name): str(sql) for name, sql in found}


def _schema(url: str) -> tuple[dict[str, str], dict[str, str]]:
    engine = create_engine(url)
    try:
        with engine.connect() as connection:
            return _triggers(connection), _indexes(connection)
    finally:
        engine.dispose()


def test_the_rebuilt_tables_keep_their_triggers_and_indexes(empty_url: str) -> None:
    """Every trigger and index of the revision before is there after it, word for word
    (the append-only triggers of 0002, 0007 and 0008; the login checks of 0010)."""
    _at(empty_url, BEFORE)
    triggers, indexes = _schema(empty_url)
    assert any("append-only" in sql or "append_only" in sql for sql in triggers.values())
    _at(empty_url, RULES)
    after_triggers, after_indexes = _schema(empty_url)
    assert after_triggers == triggers
    assert {name: after_indexes[name] for name in indexes if name in after_indexes} == indexes
    assert set(after_indexes) > set(indexes)  # the foreign keys' new indexes


def test_an_upgraded_database_has_the_triggers_and_indexes_of_a_fresh_one(
    empty_url: str, request: pytest.FixtureRequest
) -> None:
    """Upgraded from the revision before, or made at the head: the same schema objects."""
    _at(empty_url, BEFORE)
    _at(empty_url, migrate.HEAD)
    if empty_url.startswith("sqlite"):
        fresh = f"sqlite:///{request.getfixturevalue('sqlite_template')}"
    else:
        server = make_url(request.getfixturevalue("pg_server"))
        fresh = server.set(database=request.getfixturevalue("pg_template")).render_as_string(
            hide_password=False
        )
    upgraded = _schema(empty_url)
    assert upgraded[0] and _schema(fresh) == upgraded


# The people, a loan and a drill whose tare reads zero: a row the new rules refuse.
_ROWS = (
    "INSERT INTO operator (id, code, name, role, active, created_at) VALUES "
    "(1, 'boss', 'Bea Oswald', 'manager', TRUE, :now)",
    "INSERT INTO lender (id, name, created_at) VALUES (1, 'Invented Museum', :now)",
    "INSERT INTO loan (id, lender_id, reference, title, borrower, status, created_at) "
    "VALUES (1, 1, 'INV-1', 'Invented loan', 'Dr. Nobody', 'open', :now)",
    "INSERT INTO specimen (id, loan_id, catalog_number, extra, status, created_at) "
    "VALUES (1, 1, 'INV 1', '{}', 'on_hand', :now)",
    "INSERT INTO powder (id, specimen_id, tissue, tare_mg, gross_mg, readability_mg, mass_mg, "
    "mass_u_mg, drilled_at, drilled_by, status, created_at) VALUES (7, 1, 'enamel', 0.0, "
    "2.15, 0.001, 2.15, 0.0004, :now, 'boss', 'available', :now)",
)


def _dump(url: str) -> list[tuple[object, ...]]:
    engine = create_engine(url)
    try:
        with engine.connect() as connection:
            rows = [
                ("alembic", *row)
                for row in connection.execute(text("SELECT version_num FROM alembic_version"))
            ]
            rows += [("powder", *row) for row in connection.execute(text("SELECT * FROM powder"))]
            return rows
    finally:
        engine.dispose()


def test_a_stored_row_breaking_a_new_rule_stops_the_upgrade(empty_url: str) -> None:
    _at(empty_url, BEFORE)
    engine = create_engine(empty_url)
    try:
        with engine.begin() as connection:
            for statement in _ROWS:
                connection.execute(text(statement), {"now": "2026-01-05 09:00:00"})
    finally:
        engine.dispose()
    before = _dump(empty_url)
    path = make_url(empty_url).database if empty_url.startswith("sqlite") else None
    content = Path(path).read_bytes() if path else None

    target = path if path else empty_url
    with pytest.raises(RuleViolation) as stopped:
        upgrade_database(target)
    line = str(stopped.value)
    assert "\n" not in line
    assert "powder row 7" in line and "tare_mg = 0" in line and "tare mg above zero" in line
    assert _dump(empty_url) == before
    if path:
        assert Path(path).read_bytes() == content
        assert Path(f"{path}.bak-{BEFORE}").exists()  # the copy made before trying


FLOATS_FIXTURE = Path(__file__).resolve().parents[1] / "fixtures" / "demo-63f3ae0.sqlite"


def _measured(path: Path) -> dict[tuple[str, int, str], object]:
    """Every measured value of the file as stored, read without tracker's code."""
    connection = sqlite3.connect(path)
    try:
        return {
            (table, row_id, column): value
            for table, columns in EXACT_COLUMNS.items()
            for column in columns
            for row_id, value in connection.execute(f"SELECT id, {column} FROM {table}")
        }
    finally:
        connection.close()


EXACT_COLUMNS = {
    "powder": ("tare_mg", "gross_mg", "readability_mg", "mass_mg", "mass_u_mg", "residual_mg"),
    "solution": ("powder_mass_mg", "powder_mass_u_mg", "solution_mass_g", "solution_mass_u_g"),
    "aliquot": ("mass_g", "mass_u_g"),
    "concentration": ("value_ug_per_g", "u_ug_per_g"),
    "cut": ("recovered_ug", "recovered_u_ug"),
    "loan_terms": ("max_mass_per_specimen_mg", "max_total_mass_mg"),
}


def test_an_older_database_whose_facts_state_floats_upgrades_and_audits_clean(
    tmp_path: Path,
) -> None:
    """Floats become their shortest decimal text (Python's repr, no exponent); the audit
    holds the older events' JSON numbers to those digits and finds the books complete."""
    path = tmp_path / "lab.sqlite"
    shutil.copyfile(FLOATS_FIXTURE, path)
    path.chmod(0o600)
    before = _measured(path)
    assert any(isinstance(value, float) for value in before.values())
    db = open_database(path)
    try:
        report = audit(db)
    finally:
        db.close()
    after = _measured(path)
    assert after.keys() == before.keys()
    for where, value in before.items():
        shortest = None if value is None else format(Decimal(repr(value)), "f")
        assert after[where] == shortest, where
    assert report.ok and report.coverage.complete and report.discrepancies == []
    assert report.chain.ok

    # a value changed behind the ledger's back is still named, with both sets of digits
    with sqlite3.connect(path) as connection:
        connection.execute("UPDATE powder SET mass_mg = '9.999' WHERE id = 1")
    db = open_database(path)
    try:
        (found,) = audit(db).discrepancies
    finally:
        db.close()
    assert (found.field, found.stored) == ("mass_mg", "9.999")
    assert found.ledger == before[("powder", 1, "mass_mg")]  # the older event's JSON number
