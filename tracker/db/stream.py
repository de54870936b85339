"""Rows read through the driver's own cursor, a batch at a time, for walks of whole tables.

Walking a decade's ledger (a million rows) or every row of the lab, wrapping each row in a
SQLAlchemy result row costs more than the work done with it. The statement is built and
compiled by SQLAlchemy; its rows then come straight from the driver's cursor — a
server-side cursor on PostgreSQL, so memory holds one batch, never the table.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from typing import Any

from sqlalchemy import Connection, Engine
from sqlalchemy.sql import ClauseElement


def batches(
    connection: Connection,
    statement: ClauseElement,
    name: str,
    size: int = 5000,
    described: Callable[[Sequence[Any]], None] | None = None,
) -> Iterator[list[tuple[Any, ...]]]:
    """The statement's rows as the driver returns them (values unconverted), ``size`` at a
    time; ``name`` names PostgreSQL's server-side cursor. ``described`` is told the
    cursor's description (each column's driver type) before the first batch."""
    sql = str(statement.compile(connection, compile_kwargs={"literal_binds": True}))
    driver = connection.connection.driver_connection
    assert driver is not None
    named = {"name": name} if connection.dialect.name == "postgresql" else {}
    cursor = driver.cursor(**named)
    try:
        cursor.execute(sql)
        if described is not None:
            described(cursor.description)
        while batch := cursor.fetchmany(size):
            yield batch
    finally:
        cursor.close()


@contextmanager
def snapshot(engine: Engine) -> Iterator[Connection]:
    """A read-only connection whose statements all see the database as of its first one
    (one transaction; REPEATABLE READ on PostgreSQL), never taking the writer lock."""
    with engine.connect() as connection:
        if connection.dialect.name == "postgresql":
            connection = connection.execution_options(isolation_level="REPEATABLE READ")
        with connection.begin():
            yield connection
