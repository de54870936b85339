"""The books against the ledger: every tamper of every described table is named, exactly.

For each table the ledger describes, one copy of a lab that has rows in all of them is
tampered with as the database's owner could (raw SQL past the append-only triggers and
the foreign keys): one value of its first row changed, a copy of that row inserted under a
new key, its last row deleted. The audit must name exactly those three — table, key,
field, the ledger's value and the stored value — and nothing else. The expected values
are read from the database with raw SQL before the tamper, never from tracker's output.
"""

from __future__ import annotations

import json
from decimal import Decimal
from typing import Any

import pytest
from sqlalchemy import Enum, Float, Integer, String, Table, UniqueConstraint

from tests.cli.conftest import invoke
from tests.services.audit_lab import Books
from tracker.db.database import open_database
from tracker.domain.base import Base, Exact, decimal_text
from tracker.domain.ids import Kind, format_id
from tracker.services.ledger.audit import audit

DESCRIBED = [t.name for t in Base.metadata.sorted_tables if t.name != "custody_event"]
_KINDS = {
    mapper.local_table.name: mapper.class_.id_kind  # type: ignore[attr-defined]
    for mapper in Base.registry.mappers
    if hasattr(mapper.class_, "id_kind")
}


def _key(table: Table, row: dict[str, Any]) -> str:
    """A row's key as docs/ledger.md documents it: its public ID, else its primary key."""
    kind: Kind | None = _KINDS.get(table.name)
    if kind is not None:
        return format_id(kind, row["id"])
    return "/".join(str(row[c.name]) for c in table.primary_key.columns)


def _tamperable(table: Table, row: dict[str, Any]) -> str:
    """A plain column of ``row`` with a value: a number first, then text, then a count."""
    plain = [
        c
        for c in table.columns
        if not c.primary_key and not c.foreign_keys and row[c.name] is not None
    ]
    for kind in (Float, Exact, String, Integer):
        for column in plain:
            if isinstance(column.type, kind) and not isinstance(column.type, Enum):
                return column.name
    return ""  # every column is the key's (a ledger mention): the key itself is changed


def _changed(value: Any, exact: bool = False) -> Any:
    """Another value of the same type and length (a number halved: every rule of the
    schema still holds, as a tamperer's value must to be stored)."""
    if exact:  # NUMERIC on PostgreSQL, its digits on SQLite
        half = Decimal(str(value)) / 2
        return half if isinstance(value, Decimal) else decimal_text(half)
    if isinstance(value, float):
        return value / 2 if value else 0.5
    if isinstance(value, int):
        return value + 1000
    return value[:-1] + ("X" if value[-1:] != "X" else "Y")


def _copy(table: Table, row: dict[str, Any], top: dict[str, Any]) -> dict[str, Any]:
    """``row`` under a new primary key, every unique value made unique again."""
    copy = dict(row)
    unique = [
        [c for c in constraint.columns if not c.foreign_keys] or list(constraint.columns)
        for constraint in table.constraints
        if isinstance(constraint, UniqueConstraint)
    ]
    unique += [[c] for c in table.columns if c.unique]
    unique.append(list(table.primary_key.columns))
    for columns in unique:
        column = next((c for c in columns if isinstance(row[c.name], str)), columns[0])
        value = row[column.name]
        if value is None:
            continue  # NULLs never collide in a unique column (an operator's unbound login)
        if isinstance(value, int):
            copy[column.name] = top[column.name] + 1000
        else:
            copy[column.name] = value[:-2] + "~9"
    return copy


def _rows(books: Books, table: Table) -> list[dict[str, Any]]:
    order = ", ".join(c.name for c in table.primary_key.columns)
    found = books.raw(f"SELECT * FROM {table.name} ORDER BY {order}")
    return [dict(r._mapping) for r in found]


@pytest.mark.parametrize("name", DESCRIBED)
def test_every_kind_of_tamper_is_named_exactly(books: Books, name: str) -> None:
    table = Base.metadata.tables[name]
    rows = _rows(books, table)
    assert len(rows) >= 2, f"the lab needs two {name} rows"
    first, last = rows[0], rows[-1]
    column = _tamperable(table, first)
    key_column = "ref" if not column else None  # event_ref: seq and ref are all it holds
    exact = bool(column) and isinstance(table.c[column].type, Exact)
    old, new = (first[column or "ref"], _changed(first[column or "ref"], exact))
    where = " AND ".join(f"{c.name} = :k_{c.name}" for c in table.primary_key.columns)

    def keys(row: dict[str, Any]) -> dict[str, Any]:
        return {f"k_{c.name}": row[c.name] for c in table.primary_key.columns}

    top = {
        c.name: max(numbers)
        for c in table.columns
        if (numbers := [r[c.name] for r in rows if type(r[c.name]) is int])
    }
    copy = _copy(table, first, top)
    books.raw(
        f"UPDATE {name} SET {column or key_column} = :new WHERE {where}", new=new, **keys(first)
    )
    names = ", ".join(copy)
    books.raw(
        f"INSERT INTO {name} ({names}) VALUES ({', '.join(':' + n for n in copy)})",
        **_bound(table, copy),
    )
    books.raw(f"DELETE FROM {name} WHERE {where}", **keys(last))

    db = open_database(books.target)
    try:
        report = audit(db)
    finally:
        db.close()
    found = {(d.kind, d.table, d.key, d.field): d for d in report.discrepancies}
    expected = {
        ("unrecorded", name, _key(table, copy), None),
        ("missing", name, _key(table, last), None),
    }
    assert not report.ok and report.coverage.complete
    if key_column:  # a key changed: the row the ledger made is gone, another is unrecorded
        moved = {**first, key_column: new}
        expected |= {("missing", name, _key(table, first), None)}
        expected |= {("unrecorded", name, _key(table, moved), None)}
        assert set(found) == expected
        return
    assert set(found) == expected | {("changed", name, _key(table, first), column)}
    changed = found[("changed", name, _key(table, first), column)]
    assert (changed.ledger, changed.stored) == (_fact(old, exact), _fact(new, exact))
    unrecorded = found[("unrecorded", name, _key(table, copy), None)]
    assert unrecorded.ledger is None and unrecorded.stored[column] == _fact(copy[column], exact)
    missing = found[("missing", name, _key(table, last), None)]
    assert missing.stored is None and missing.ledger[column] == _fact(last[column], exact)


def _fact(value: Any, exact: bool) -> Any:
    """A stored value as the facts state it: an exact value as its digits."""
    return decimal_text(Decimal(str(value))) if exact else value


def _bound(table: Table, row: dict[str, Any]) -> dict[str, Any]:
    """Values as the driver takes them (JSON columns as text)."""
    bound = {}
    for name, value in row.items():
        column_type = table.c[name].type
        if isinstance(value, dict | list) or type(column_type).__name__ == "JSON":
            bound[name] = value if isinstance(value, str) else json.dumps(value)
        else:
            bound[name] = value
    return bound


def test_an_untouched_lab_audits_clean_and_its_replay_holds_every_row(books: Books) -> None:
    db = open_database(books.target)
    try:
        report = audit(db)
    finally:
        db.close()
    assert report.ok and report.discrepancies == [] and report.coverage.complete
    stored = sum(
        books.raw(f"SELECT count(*) FROM {name}")[0][0] for name in DESCRIBED
    )  # every row of every described table was compared, and matched its replay
    assert report.rows == stored
    events = books.raw("SELECT count(*) FROM custody_event")[0][0]
    assert report.chain.ok and report.coverage.events == events


def test_the_cli_names_each_discrepancy_and_exits_1(books: Books) -> None:
    clean = invoke("ledger", "audit", db=books.target, as_json=True)
    assert clean.exit_code == 0 and json.loads(clean.stdout)["ok"] is True
    (old,) = books.raw("SELECT mass_mg FROM powder WHERE id = 1")[0]
    books.raw("UPDATE powder SET mass_mg = 1.0 WHERE id = 1")
    answer = invoke("ledger", "audit", db=books.target, as_json=True)
    assert answer.exit_code == 1
    listed = json.loads(answer.stdout)["discrepancies"]
    assert listed == [
        {
            "kind": "changed",
            "table": "powder",
            "key": format_id(Kind.POWDER, 1),
            "field": "mass_mg",
            "ledger": _fact(old, exact=True),  # measured values: their digits
            "stored": "1.0",
        }
    ]
    human = invoke("ledger", "audit", db=books.target)
    assert human.exit_code == 1
    assert f"powder {format_id(Kind.POWDER, 1)}: mass_mg is 1.0" in human.stdout


def test_a_forged_event_row_does_not_pass_as_facts(books: Books) -> None:
    """Facts are only what the chain holds: a payload edited to match a tampered row breaks
    the chain, and the audit says the books could not be audited."""
    books.raw("UPDATE powder SET mass_mg = 1.0 WHERE id = 1")
    books.raw(
        "UPDATE custody_event SET payload = replace(payload, :was, :now) WHERE object_ref = :id",
        was='"mass_mg":',
        now='"mass_mg":1.0,"was":',
        id=format_id(Kind.POWDER, 1),
    )
    db = open_database(books.target)
    try:
        report = audit(db)
    finally:
        db.close()
    assert not report.ok and not report.chain.ok
    assert report.verdict().startswith("books not audited: the ledger is broken at event #")


def test_counts_are_unchanged_by_an_audit(books: Books) -> None:
    before = {name: books.raw(f"SELECT count(*) FROM {name}")[0][0] for name in DESCRIBED}
    db = open_database(books.target)
    try:
        audit(db)
    finally:
        db.close()
    assert before == {name: books.raw(f"SELECT count(*) FROM {name}")[0][0] for name in DESCRIBED}
