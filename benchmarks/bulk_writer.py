"""Batched writes for the bulk executor: rows as the ORM would flush them, many per statement.

The bulk executor keeps the lab as transient ORM objects (never added to a session), so it
can use the same models, defaults and service helpers as the services. The writer turns
them into rows with :func:`tracker.domain.facts.values_of` — column by column, with the
model's own defaults for what was never set, the values the event's facts state — and
writes them with SQLAlchemy Core ``insert()``/``update()`` executemany through the
models' own tables, so every value passes through the same column types (UTC timestamps,
JSON, enums) as an ORM flush would send it.

A row already written and changed afterwards (a specimen checked in, a vial moved) is
updated at the next flush; before any real service runs, everything is flushed, so the
database always holds exactly what the services would have written up to that step.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import Table, bindparam, insert, inspect, update
from sqlalchemy.engine import Connection

from tracker.db.database import Database
from tracker.db.engine import writer
from tracker.domain.base import Base
from tracker.domain.facts import values_of
from tracker.domain.models import CustodyEvent


class BulkWriter:
    """Pending inserts (objects or plain rows) and updates, written in one transaction."""

    def __init__(self, db: Database) -> None:
        self.db = db
        self._tables: dict[type[Base], Table] = {}
        self._pending: dict[Table, list[Any]] = {}
        self._written: dict[Table, int] = {}  # highest id written per table
        self._dirty: dict[Table, dict[int, Base]] = {}
        self._order = list(Base.metadata.sorted_tables)  # parents before children

    def _table(self, model: type[Base]) -> Table:
        if model not in self._tables:
            table = inspect(model).local_table
            assert isinstance(table, Table)
            self._tables[model] = table
        return self._tables[model]

    def add(self, obj: Base) -> None:
        """A new row: written at the next flush with its values at that moment."""
        self._pending.setdefault(self._table(type(obj)), []).append(obj)

    def add_row(self, model: type[Base], row: dict[str, Any]) -> None:
        """A new row that never changes (ledger mentions), given as column values."""
        self._pending.setdefault(self._table(model), []).append(row)

    def add_event(self, event: CustodyEvent) -> None:
        """A ledger event, built whole by the services' ``sealed_event``: every column set."""
        mapper = inspect(CustodyEvent)
        row = {p.columns[0].name: getattr(event, p.key) for p in mapper.column_attrs}
        self.add_row(CustodyEvent, row)

    def changed(self, obj: Base) -> None:
        """``obj`` changed; if its row is already written, rewrite it at the next flush."""
        table = self._table(type(obj))
        key = obj.id  # type: ignore[attr-defined]
        if key <= self._written.get(table, 0):
            self._dirty.setdefault(table, {})[key] = obj

    @property
    def pending(self) -> int:
        return sum(len(rows) for rows in self._pending.values())

    def flush(self) -> None:
        if not self._pending and not self._dirty:
            return
        with writer(self.db.engine).begin() as connection:
            for table in self._order:
                rows = self._pending.pop(table, None)
                if rows:
                    self._insert(connection, table, rows)
            for table, objs in self._dirty.items():
                self._update(connection, table, list(objs.values()))
        self._dirty = {}

    def _row(self, obj: Any) -> dict[str, Any]:
        return obj if isinstance(obj, dict) else values_of(obj)

    def _insert(self, connection: Connection, table: Table, objs: list[Any]) -> None:
        rows = [self._row(obj) for obj in objs]
        connection.execute(insert(table), rows)
        if "id" in table.c:
            self._written[table] = max(self._written.get(table, 0), max(r["id"] for r in rows))

    def _update(self, connection: Connection, table: Table, objs: list[Base]) -> None:
        rows = [self._row(obj) for obj in objs]
        keys = [key for key in rows[0] if key != "id"]
        statement = (
            update(table)
            .where(table.c.id == bindparam("_id"))
            .values({key: bindparam(f"_{key}") for key in keys})
        )
        connection.execute(
            statement, [{"_id": r["id"], **{f"_{k}": r[k] for k in keys}} for r in rows]
        )
