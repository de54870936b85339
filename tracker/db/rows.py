"""Many new rows into one table in one driver ``executemany``, typed by the table's columns.

SQLAlchemy's own executemany builds, checks and converts a parameter set per row: at a
manifest's 20,000 specimens and 20,000 ledger mentions that bookkeeping cost more than the
database's work. Here the statement is compiled once for the connection's backend; each
row becomes one plain tuple (or mapping, for named-parameter drivers), converted only by
the columns whose type needs it (JSON, enums, timestamps), with the very converter an ORM
flush would use. What every row shares is written into the statement once, as an SQL
literal rendered by the column's type; a type with no literal form (JSON) is bound with
every row instead.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from operator import itemgetter
from typing import Any

from sqlalchemy import ColumnElement, Table, bindparam, insert, literal, literal_column
from sqlalchemy.engine import Connection, Dialect
from sqlalchemy.exc import CompileError

Converter = Callable[[Any], Any]


def insert_rows(
    connection: Connection,
    table: Table,
    rows: Sequence[Mapping[str, Any]],
    shared: Mapping[str, Any] | None = None,
) -> None:
    """Insert ``rows`` (each with the same keys) plus the ``shared`` values into ``table``.

    Every column with a Python-side default must be given, in the rows or in ``shared``:
    this path never runs defaults, and says so rather than leave a column empty.
    """
    if not rows:
        return
    shared = dict(shared or {})
    _require_defaults(table, [*rows[0], *shared])
    dialect = connection.dialect
    values, unrendered = _literals(table, shared, dialect)
    if unrendered:
        rows = [{**row, **unrendered} for row in rows]
    keys = list(rows[0])
    values.update({key: bindparam(key, type_=table.c[key].type) for key in keys})
    compiled = insert(table).values(values).compile(dialect=dialect)
    if compiled.positional:  # qmark drivers (sqlite3): one tuple per row, in the SQL's order
        names = list(compiled.positiontup or [])
        params: list[Any] = _positional(rows, names, [_converter(table, n, dialect) for n in names])
    else:  # named drivers (psycopg): one mapping per row
        convert = [(key, _converter(table, key, dialect)) for key in keys]
        params = [{key: fn(row[key]) if fn else row[key] for key, fn in convert} for row in rows]
    connection.exec_driver_sql(compiled.string, params)


def _positional(
    rows: Sequence[Mapping[str, Any]], names: list[str], converters: list[Converter | None]
) -> list[Any]:
    """Each row's values in ``names`` order, converted where a converter is given.

    The values are picked by one ``itemgetter`` call per row (C speed); only the few
    columns that need converting (JSON, enums, timestamps) are touched one by one.
    """
    one = names[0]
    pick = itemgetter(*names) if len(names) > 1 else lambda row: (row[one],)
    typed = [(i, fn) for i, fn in enumerate(converters) if fn is not None]
    if not typed:
        return [pick(row) for row in rows]
    picked = [list(pick(row)) for row in rows]
    for values in picked:
        for i, fn in typed:
            values[i] = fn(values[i])
    return [tuple(values) for values in picked]  # the driver layer takes tuples, not lists


def _converter(table: Table, key: str, dialect: Dialect) -> Converter | None:
    """The column type's bind converter for this backend (None when values pass as they are)."""
    column_type = table.c[key].type
    processor: Converter | None = column_type.dialect_impl(dialect).bind_processor(dialect)
    return processor


def _require_defaults(table: Table, given: list[str]) -> None:
    missing = [
        column.key
        for column in table.columns
        if column.key not in given and column.default is not None
    ]
    if missing:
        raise ValueError(f"insert_rows into {table.name} needs values for {', '.join(missing)}")


def _literals(
    table: Table, values: Mapping[str, Any], dialect: Dialect
) -> tuple[dict[str, ColumnElement[Any]], dict[str, Any]]:
    """Each value rendered as SQL by its column's own type, as a bound value would be;
    and the values whose type has no literal form, left to be bound."""
    rendered: dict[str, ColumnElement[Any]] = {}
    unrendered: dict[str, Any] = {}
    for name, value in values.items():
        column_type = table.c[name].type
        try:
            sql = literal(value, column_type).compile(
                dialect=dialect, compile_kwargs={"literal_binds": True}
            )
        except CompileError:
            unrendered[name] = value
            continue
        rendered[name] = literal_column(str(sql), column_type)
    return rendered, unrendered
