"""What can never be true is refused by the schema itself, whatever writes it.

Every CHECK constraint of the models is tried by raw SQL on SQLite and PostgreSQL, as an
UPDATE of a stored row (tables that allow updates) and as an INSERT of a copy of a stored
row holding the impossible value, in the lab of ``audit_lab.py`` (a row in every table).
Each must be refused by that constraint. The values are impossible by common practice:
no mass, readability or limit is zero or below, no uncertainty or concentration below
zero, a share lies from 0 to 1 and a yield threshold above 0, sequence numbers count
from 1, an isotope ratio is above zero (a δ value may be negative), an age in Ma is not
negative and a range's low end is not above its high end.
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from dataclasses import dataclass
from decimal import Decimal

import pytest
from sqlalchemy import CheckConstraint, Connection, Table, inspect, text
from sqlalchemy.exc import DBAPIError

from tests import factories as make
from tests.conftest import Counts
from tests.services.audit_lab import Books
from tracker.db.database import Database
from tracker.domain.base import Base
from tracker.domain.errors import RuleViolation
from tracker.services.bench import drilling
from tracker.services.bench.drilling import Drill

APPEND_ONLY = {"custody_event", "correction", "backdated_entry", "event_ref"}


@dataclass(frozen=True)
class Breach:
    """One constraint and the impossible values that must reach it."""

    table: str
    constraint: str
    values: dict[str, str]  # column -> SQL expression of the impossible value


def _breaches() -> Iterator[Breach]:
    """For each rule (by its kind, the end of its name) the values that break it."""
    import tracker.domain.models  # noqa: F401  # registers every table

    for table in Base.metadata.sorted_tables:
        for check in sorted(
            (c for c in table.constraints if isinstance(c, CheckConstraint)),
            key=lambda c: str(c.name),
        ):
            name = str(check.name)
            rule = name.removeprefix(f"ck_{table.name}_")
            for values in _impossible(rule):
                yield Breach(table.name, name, values)


def _impossible(rule: str) -> list[dict[str, str]]:
    kinds = {
        "_above_zero": ["0", "-1"],
        "_not_negative": ["-0.001"],
        "_share": ["0", "1.5", "-0.2"],
        "_from_one": ["0", "-3"],
        "_count": ["-1"],
    }
    if match := re.fullmatch(r"(\w+)_ratio_above_zero", rule):
        return [{match[1]: "0", "kind": "'ratio'"}, {match[1]: "-1.5", "kind": "'ratio'"}]
    if match := re.fullmatch(r"(\w+_mg)_above_(\w+_mg)", rule):  # gross above tare
        return [{match[1]: match[2]}, {match[1]: f"{match[2]} - 1"}]
    if match := re.fullmatch(r"(\w+)_not_above_(\w+)", rule):  # a range's ends
        return [{match[1]: "0.9", match[2]: "0.5"}]
    for ending, values in kinds.items():
        if rule.endswith(ending):
            return [{rule.removesuffix(ending): value} for value in values]
    raise AssertionError(f"no impossible value known for the rule {rule}")


BREACHES = list(_breaches())


def _key(table: Table) -> list[str]:
    return [column.name for column in table.primary_key.columns]


def _refused_by(connection: Connection, statement: str, constraint: str) -> str | None:
    """None when the statement is refused by ``constraint``; else what happened instead."""
    with connection.begin_nested() if connection.in_transaction() else connection.begin():
        try:
            connection.execute(text(statement))
        except DBAPIError as error:
            message = str(error.orig)
            diag = getattr(error.orig, "diag", None)
            named = getattr(diag, "constraint_name", None) or message
            return None if constraint in named else f"refused otherwise: {message.strip()}"
        return "accepted"


def _copy_of(table: Table, breach: Breach) -> str:
    """INSERT of a copy of the table's first row, with a new key, holding the values."""
    key = _key(table)
    values: dict[str, str] = {column.name: column.name for column in table.columns}
    for column in key:
        if table.columns[column].type.python_type is int:
            values[column] = f"(SELECT MAX({column}) + 1 FROM {table.name})"
        else:  # a text key: a value no row has
            values[column] = f"substr({column}, 2) || '~'"
    if table.name == "custody_event":
        values["hash"] = "substr(hash, 2) || '~'"
    if table.name == "backdated_entry":
        values["event_seq"] = f"(SELECT MAX(event_seq) + 1 FROM {table.name})"
    values.update(breach.values)
    first = " AND ".join(f"{k} = (SELECT MIN({k}) FROM {table.name})" for k in key[:1])
    names = ", ".join(values)
    chosen = ", ".join(values.values())
    return f"INSERT INTO {table.name} ({names}) SELECT {chosen} FROM {table.name} WHERE {first}"


def _update_of(table: Table, breach: Breach) -> str:
    key = _key(table)[0]
    changes = ", ".join(f"{column} = {value}" for column, value in breach.values.items())
    return f"UPDATE {table.name} SET {changes} WHERE {key} = (SELECT MIN({key}) FROM {table.name})"


def test_every_rule_has_impossible_values() -> None:
    names = {breach.constraint for breach in BREACHES}
    assert len(names) >= 50  # every measured value, share, count and sequence number


def test_every_rule_refuses_raw_inserts_and_updates(books: Books) -> None:
    """Each constraint refuses its impossible values in an INSERT and an UPDATE by raw SQL;
    nothing else in the row is what refuses it (the same copy with possible values goes in)."""
    engine = books.engine()
    failures: list[str] = []
    try:
        with engine.connect() as connection:
            for breach in BREACHES:
                table = Base.metadata.tables[breach.table]
                statements = [("insert", _copy_of(table, breach))]
                if breach.table not in APPEND_ONLY:
                    statements.append(("update", _update_of(table, breach)))
                for verb, statement in statements:
                    found = _refused_by(connection, statement, breach.constraint)
                    if found is not None:
                        failures.append(f"{breach.constraint} {verb} {breach.values}: {found}")
                connection.rollback()
            plain = Breach("powder", "", {})
            copied = _copy_of(Base.metadata.tables["powder"], plain)
            assert _refused_by(connection, copied, "-") == "accepted"
    finally:
        engine.dispose()
    assert failures == []


def test_a_service_reaching_a_rule_says_one_line(db: Database, counts: Counts) -> None:
    """A service that missed a rule (here: a drill built without its request's checks) is
    refused by the schema, and the person reads one line; nothing is written."""
    specimen = make.specimen(db, make.loan(db))
    before = counts()
    unchecked = Drill.model_construct(
        specimen=specimen,
        tissue="enamel",
        tare=Decimal("-1.000"),
        gross=Decimal("1.000"),
        readability=Decimal("0.001"),
    )
    with pytest.raises(RuleViolation) as refused:
        drilling.drill(db, "tech", unchecked)
    line = str(refused.value)
    assert "\n" not in line and "tare_mg must be above zero" in line
    assert counts() == before


def test_every_foreign_key_has_an_index(db: Database) -> None:
    """Read from the live schema: each foreign key's columns lead an index, a unique key
    or the primary key, so a join or a parent's delete check never scans the child table."""
    with db.engine.connect() as connection:
        inspector = inspect(connection)
        unindexed = []
        for table in inspector.get_table_names():
            led = [tuple(index["column_names"]) for index in inspector.get_indexes(table)]
            led += [tuple(u["column_names"]) for u in inspector.get_unique_constraints(table)]
            led.append(tuple(inspector.get_pk_constraint(table)["constrained_columns"]))
            for foreign in inspector.get_foreign_keys(table):
                columns = tuple(foreign["constrained_columns"])
                if not any(found[: len(columns)] == columns for found in led):
                    unindexed.append(f"{table}{columns}")
    assert unindexed == []


def test_the_live_schema_holds_every_rule_of_the_models(db: Database) -> None:
    """The constraints the migrations made are the models' ones, by name, on each backend."""
    with db.engine.connect() as connection:
        inspector = inspect(connection)
        live = {
            (table, str(check["name"]))
            for table in inspector.get_table_names()
            for check in inspector.get_check_constraints(table)
        }
    modelled = {(breach.table, breach.constraint) for breach in BREACHES}
    assert live == modelled
