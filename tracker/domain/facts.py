"""The facts of a row: every stored column, written the way the ledger states it.

Every custody event's payload carries, under :data:`FACTS`, the complete facts of the rows
its unit of work created, changed or deleted, so that replaying the ledger from event 1
rebuilds every table the events describe (format "tracker-facts/1")::

    "facts": {
      "created": {table: {key: {column: value, ...}, ...}, ...},   every column of a new row
      "changed": {table: {key: {column: new value, ...}, ...}, ...},  the columns that changed
      "deleted": {table: [key, ...], ...}
    }

Sections with nothing in them are left out (``"facts": {}``: the event wrote no row).

A row's **key** is its public ID where its table has one (``PW-00042-O``); otherwise its
primary key as text (``"17"``; a two-column key joined by ``/``: ``event_ref`` rows are
``"<seq>/<ref>"``). The key's columns are not repeated among the facts. A **value** is:

- a reference to a row with a public ID (``specimen_id``, ``location_id`` ...): that ID;
  references to operators stay their codes, other references the row's number;
- a time: ISO 8601 UTC with microseconds and ``Z``, as the ledger writes its own times;
  a day: ``YYYY-MM-DD``;
- a floating-point number: a JSON number (Python's shortest round-trip form); an exact
  decimal: its digits as a JSON string; a whole number: a JSON number; a flag: true/false;
- text and the closed vocabularies (statuses, roles ...): the stored text;
- structured columns (lists, term maps, ratios): the stored JSON value;
- file contents (a document's bytes): ``"sha256:<hex digest>"``;
- nothing stored: null.

:func:`row_facts` is the one function that turns a row's stored values into its facts: the
unit of work uses it on what it writes, the bench's bulk writer on what it writes, and the
audit on the rows it reads back, so all three speak the same form.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from datetime import date, datetime
from decimal import Decimal
from enum import Enum
from functools import cache
from typing import Any

from sqlalchemy import (
    JSON,
    Boolean,
    Date,
    Float,
    Integer,
    LargeBinary,
    Numeric,
    Table,
    inspect,
)
from sqlalchemy import Enum as EnumType
from sqlalchemy.orm import Mapper

from tracker.domain.base import Base, Exact, UTCDateTime, as_decimal, decimal_text
from tracker.domain.ids import Kind, format_id
from tracker.domain.ledger import ledger_stamp

FACTS = "facts"  # the payload's key
FORMAT = "tracker-facts/1"
# The ledger's own table: an event cannot state the facts of itself.
NOT_DESCRIBED = frozenset({"custody_event"})
# Columns that hold an item's public ID as text (not a foreign key): they name it all the same.
ITEM_COLUMNS = frozenset({"item_ref"})

Convert = Callable[[Any], Any]
_MISSING = object()


@dataclass(frozen=True)
class Column:
    """One stored column: the mapped attribute, the column's name and how its value reads."""

    attr: str
    name: str
    convert: Convert
    default: Callable[[], Any] | None  # the model's Python-side default, for unset values
    shape: str  # what the fact is: "public", "time", "day", "number", "text", "json" ...
    refers: Kind | None = None  # for a reference by public ID: the kind it names


@dataclass(frozen=True)
class Layout:
    """How one table's rows become facts: the key, and every other column in order."""

    table: str
    kind: Kind | None  # the public ID's kind, when the table has one
    key: tuple[Column, ...]  # the primary key's columns
    columns: tuple[Column, ...]  # every other column: the facts
    index: Mapping[str, int] = field(default_factory=dict)  # column name -> position

    def key_of(self, values: Mapping[str, Any]) -> str:
        """The row's key in the facts (see the module's documentation)."""
        if self.kind is not None:
            return format_id(self.kind, values[self.key[0].name])
        return "/".join(str(values[column.name]) for column in self.key)


# Each converter takes a stored value (None included: nothing stored reads as null). They
# are called once for every column of every row an audit reads, so each is one call.


def _text(value: Any) -> Any:
    if value is None or type(value) is str:
        return value
    return value.value if isinstance(value, Enum) else str(value)


def _number(value: Any) -> Any:
    if value is None:
        return None
    return str(value) if isinstance(value, Decimal) else float(value)


def _exact(value: Any) -> Any:
    # a Decimal (PostgreSQL's NUMERIC, an ORM row) or the digits SQLite stores
    if value is None:
        return None
    return decimal_text(value if isinstance(value, Decimal) else as_decimal(value))


def _whole(value: Any) -> Any:
    return None if value is None else int(value)


def _flag(value: Any) -> Any:
    return None if value is None else bool(value)


def _moment(value: Any) -> Any:
    # a datetime, or the text SQLite stores, in the ledger's form
    return None if value is None else ledger_stamp(value)


def _day(value: Any) -> Any:
    if value is None:
        return None
    return value.isoformat() if isinstance(value, date | datetime) else str(value)


def _digest(value: Any) -> Any:
    return None if value is None else "sha256:" + hashlib.sha256(bytes(value)).hexdigest()


def _as_is(value: Any) -> Any:
    return value


def _public(kind: Kind) -> Convert:
    def convert(value: Any) -> Any:
        return None if value is None else format_id(kind, int(value))

    return convert


_SHAPES: tuple[tuple[type[Any], str, Convert], ...] = (
    (UTCDateTime, "time", _moment),
    (EnumType, "text", _text),
    (Date, "day", _day),
    (Boolean, "flag", _flag),
    (Float, "number", _number),
    (Exact, "exact", _exact),
    (Numeric, "exact", _exact),
    (Integer, "whole", _whole),
    (LargeBinary, "digest", _digest),
    (JSON, "json", _as_is),
)


def _refers(column: Any, kinds: Mapping[str, Kind]) -> Kind | None:
    """The kind of public ID a foreign key names (None: not a reference by public ID)."""
    for foreign in column.foreign_keys:
        target = foreign.column
        kind = kinds.get(target.table.name)
        if kind is not None and target.primary_key:
            return kind
    return None


def _converter(column: Any, kind: Kind | None) -> tuple[Convert, str]:
    """How a stored value of ``column`` is written in the facts (by the column's type)."""
    if kind is not None:
        return _public(kind), "public"
    for type_, shape, convert in _SHAPES:
        if isinstance(column.type, type_):
            return convert, shape
    return _text, "text"


def _default(column: Any) -> Callable[[], Any] | None:
    default = column.default
    if default is None:
        return None
    if default.is_callable:
        make = default.arg
        return lambda: make(None)
    if default.is_scalar:
        value = default.arg
        return lambda: value
    return None


@cache
def _mappers() -> dict[str, Mapper[Any]]:
    import tracker.domain.models  # noqa: F401  # registers every table

    return {
        mapper.local_table.name: mapper
        for mapper in Base.registry.mappers
        if isinstance(mapper.local_table, Table)
    }


@cache
def _kinds() -> dict[str, Kind]:
    return {
        name: mapper.class_.id_kind
        for name, mapper in _mappers().items()
        if hasattr(mapper.class_, "id_kind")
    }


@cache
def layout(table: str) -> Layout:
    """The layout of a described table (KeyError for tables the facts do not describe)."""
    if table in NOT_DESCRIBED:
        raise KeyError(table)
    mapper = _mappers()[table]
    kinds = _kinds()
    key: list[Column] = []
    columns: list[Column] = []
    for prop in mapper.column_attrs:
        column = prop.columns[0]
        refers = _refers(column, kinds)
        convert, shape = _converter(column, refers)
        entry = Column(prop.key, column.key, convert, _default(column), shape, refers)
        (key if column.primary_key else columns).append(entry)
    index = {column.name: n for n, column in enumerate(columns)}
    return Layout(table, kinds.get(table), tuple(key), tuple(columns), index)


def described_tables() -> list[str]:
    """Every table the facts describe, parents before children."""
    _mappers()
    return [t.name for t in Base.metadata.sorted_tables if t.name not in NOT_DESCRIBED]


def table_of(obj: Any) -> str:
    return str(inspect(type(obj)).local_table.name)


def values_of(obj: Any) -> dict[str, Any]:
    """The values an ORM row holds (or will be written with): every column by name.

    A column never set takes the model's Python-side default (as the flush writes it);
    nothing is loaded from the database, so a deferred column must have been set or loaded.
    """
    held = obj.__dict__
    found: dict[str, Any] = {}
    rules = layout(table_of(obj))
    for column in (*rules.key, *rules.columns):
        value = held.get(column.attr, _MISSING)
        if value is _MISSING:
            value = column.default() if column.default is not None else None
        found[column.name] = value
    return found


def row_facts(
    rules: Layout, values: Mapping[str, Any], names: Iterable[str] | None = None
) -> dict[str, Any]:
    """The facts of one row: each column (or only ``names``) written the facts' way."""
    get = values.get  # a set-based row may leave out what it stores as NULL
    if names is None:
        return {column.name: column.convert(get(column.name)) for column in rules.columns}
    wanted = set(names)
    return {
        column.name: column.convert(get(column.name))
        for column in rules.columns
        if column.name in wanted
    }


def changed_columns(obj: Any) -> list[str]:
    """The columns of an ORM row whose value changed since it was last written (or made)."""
    state = inspect(obj)
    rules = layout(table_of(obj))
    return [
        column.name for column in rules.columns if state.attrs[column.attr].history.has_changes()
    ]


@dataclass
class Written:
    """What one unit of work (or one bulk step) wrote: the rows behind its event's facts.

    Rows are kept as they are told (ORM rows by reference, set-based rows as values) and
    read when :meth:`facts` is asked for, so the facts hold each row's final values.
    """

    _created: dict[tuple[str, str], Any] = field(default_factory=dict)
    _changed: dict[tuple[str, str], tuple[Any, set[str]]] = field(default_factory=dict)
    _deleted: dict[tuple[str, str], frozenset[str]] = field(default_factory=dict)

    def created(self, obj: Any) -> None:
        """A new ORM row (its primary key assigned)."""
        table = table_of(obj)
        if table in NOT_DESCRIBED:
            return
        key = layout(table).key_of(_key_values(obj, table))
        self._created[(table, key)] = obj

    def created_rows(
        self, table: str, rows: Sequence[Mapping[str, Any]], shared: Mapping[str, Any] | None = None
    ) -> None:
        """New rows written set-based (``insert_rows``): every column's value, key included,
        and the values every row shares."""
        rules = layout(table)
        keys = (rules.key_of(values) for values in rows)
        self.created_facts(table, zip(keys, rows_facts(table, rows, shared), strict=True))

    def created_facts(self, table: str, stated: Iterable[tuple[str, Stated]]) -> None:
        """New rows written set-based, given as their keys and facts (``rows_facts``)."""
        for key, facts in stated:
            self._created[(table, key)] = facts

    def changed(self, obj: Any, columns: Iterable[str]) -> None:
        """An existing ORM row whose ``columns`` were given new values."""
        table = table_of(obj)
        if table in NOT_DESCRIBED:
            return
        names = set(columns)
        if not names:
            return
        where = (table, layout(table).key_of(_key_values(obj, table)))
        if where in self._created:
            return  # its creation's facts will hold its final values
        _, before = self._changed.get(where, (obj, set()))
        self._changed[where] = (obj, before | names)

    def deleted(self, obj: Any) -> None:
        table = table_of(obj)
        if table in NOT_DESCRIBED:
            return
        where = (table, layout(table).key_of(_key_values(obj, table)))
        self._changed.pop(where, None)
        if self._created.pop(where, None) is None:
            self._deleted[where] = _names(layout(table), where[1], values_of(obj))

    def __bool__(self) -> bool:
        return bool(self._created or self._changed or self._deleted)

    def rows(self) -> Iterator[tuple[str, str]]:
        """Every (table, key) written, for indexes of what an event concerns."""
        yield from self._created
        yield from self._changed
        yield from self._deleted

    def names(self) -> set[str]:
        """Every item the rows written concern: each row's own public ID, or, for a row
        without one, the public IDs it refers to (a label's item, a result's cut). A unit
        of work's event mentions them, so an item's history — and an audit of one loan's
        rows — finds every event that wrote a row of it."""
        found: set[str] = set()
        for (table, key), row in self._created.items():
            if isinstance(row, Stated):
                found |= names_of(layout(table), key, row)
            else:
                found |= _names(layout(table), key, None, row)
        for (table, key), (obj, _) in self._changed.items():
            found |= _names(layout(table), key, None, obj)
        for named in self._deleted.values():
            found |= named
        return found

    def facts(self) -> dict[str, Any]:
        """The payload's facts (see the module's documentation); rows written set-based are
        ``Stated`` until the payload is written (``canonical_json(..., default=expanded)``)."""
        created: dict[str, dict[str, Any]] = {}
        for (table, key), row in self._created.items():
            stated = row if isinstance(row, Stated) else row_facts(layout(table), values_of(row))
            created.setdefault(table, {})[key] = stated
        changed: dict[str, dict[str, Any]] = {}
        for (table, key), (obj, names) in self._changed.items():
            changed.setdefault(table, {})[key] = row_facts(layout(table), values_of(obj), names)
        deleted: dict[str, list[str]] = {}
        for table, key in self._deleted:
            deleted.setdefault(table, []).append(key)
        sections = {"created": created, "changed": changed, "deleted": deleted}
        return {name: section for name, section in sections.items() if section}


class Stated:
    """A row written set-based, kept small until its event's payload is written.

    A manifest's one event states 20,000 specimens: held as dictionaries they would cost
    many times their file. Here a row is its converted values (those every row shares held
    once), with columns still in JSON text (a specimen's other terms, as they were checked)
    parsed only when the payload is written, one row at a time (:func:`expanded`).
    """

    __slots__ = ("_common", "_names", "_texts", "_values")

    def __init__(
        self,
        names: tuple[str, ...],
        values: tuple[Any, ...],
        common: Mapping[str, Any],
        texts: frozenset[str],
    ) -> None:
        self._names, self._values, self._common, self._texts = names, values, common, texts

    def get(self, name: str, default: Any = None) -> Any:
        if name in self._common:
            return self._common[name]
        for key, value in zip(self._names, self._values, strict=True):
            if key == name:
                return json.loads(value) if key in self._texts and value is not None else value
        return default

    def as_dict(self) -> dict[str, Any]:
        found = dict(self._common)
        for key, value in zip(self._names, self._values, strict=True):
            parsed = key in self._texts and value is not None
            found[key] = json.loads(value) if parsed else value
        return found


def expanded(value: Any) -> Any:
    """``json.dumps``'s ``default``: a ``Stated`` row written out as its facts; an exact
    value (a payload's typed mass) as its digits, the way the facts state it."""
    if isinstance(value, Stated):
        return value.as_dict()
    if isinstance(value, Decimal):
        return decimal_text(value)
    raise TypeError(f"{type(value).__name__} is not a row's facts")


def rows_facts(
    table: str,
    rows: Iterable[Mapping[str, Any]],
    shared: Mapping[str, Any] | None = None,
    texts: frozenset[str] = frozenset(),
) -> Iterator[Stated]:
    """The facts of rows written set-based: what they share converted once, the rest row
    by row; ``texts`` are JSON columns the rows hold as JSON text (kept so until written)."""
    rules = layout(table)
    common = row_facts(rules, shared, shared.keys()) if shared else {}
    varying = [column for column in rules.columns if column.name not in common]
    names = tuple(column.name for column in varying)
    converters = [
        (column.name, _as_is if column.name in texts else column.convert) for column in varying
    ]
    for values in rows:
        get = values.get
        yield Stated(
            names, tuple(convert(get(name)) for name, convert in converters), common, texts
        )


def references(rules: Layout, facts: Mapping[str, Any] | Stated) -> set[str]:
    """The items a row's facts refer to: its references by public ID, a label's item."""
    return {
        value
        for column in rules.columns
        if column.shape == "public" or column.name in ITEM_COLUMNS
        if (value := facts.get(column.name))
    }


def names_of(rules: Layout, key: str, facts: Mapping[str, Any] | Stated) -> frozenset[str]:
    """The items a row concerns, from its facts: its own public ID, or those it refers to."""
    return frozenset({key} if rules.kind is not None else references(rules, facts))


def _names(
    rules: Layout, key: str, values: Mapping[str, Any] | None, obj: Any = None
) -> frozenset[str]:
    if rules.kind is not None:
        return frozenset({key})
    held = values if values is not None else values_of(obj)
    named = (
        column.name
        for column in rules.columns
        if column.shape == "public" or column.name in ITEM_COLUMNS
    )
    return names_of(rules, key, {name: _fact(rules, name, held) for name in named})


def _fact(rules: Layout, name: str, values: Mapping[str, Any]) -> Any:
    return rules.columns[rules.index[name]].convert(values.get(name))


def _key_values(obj: Any, table: str) -> dict[str, Any]:
    held = obj.__dict__
    return {column.name: held.get(column.attr) for column in layout(table).key}
