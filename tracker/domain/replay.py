"""The books the ledger describes: its events replayed, then held against the stored rows.

:class:`Books` applies each event's facts (``domain.facts``) in ledger order and keeps, per
table, each row's values as the ledger last stated them — memory follows the lab's rows,
never the number of events. :meth:`Books.compare` then takes the stored rows of one table,
one at a time, and names every way they differ from the ledger:

- ``changed``: a value differs from the one the ledger last stated (changed without an event);
- ``unrecorded``: a row no event made;
- ``missing``: a row an event made that is gone.

Events recorded before events stated their rows' facts (an upgraded database) cannot say
what they wrote. The books then say so, never guess: rows such events made are counted as
not checked (their fields later events changed are checked), the items those events name
must still exist, and :class:`Coverage` says from which event on everything is checked.
"""

from __future__ import annotations

import json
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from datetime import datetime
from decimal import Decimal, InvalidOperation
from sys import intern
from typing import Any, Literal

from tracker.domain import legacy
from tracker.domain.base import decimal_from_float
from tracker.domain.facts import FACTS, Column, Layout, described_tables, layout, references
from tracker.domain.ids import Kind, looks_like_id, parse_id

Problem = Literal["changed", "unrecorded", "missing"]


class _Unknown:
    """A value no event stated (a row an event before the facts made)."""

    def __repr__(self) -> str:
        return "UNKNOWN"


UNKNOWN: Any = _Unknown()
_STATES_FACTS = f'"{FACTS}":'  # a payload without it is not parsed at all


@dataclass(frozen=True)
class Discrepancy:
    """One way the stored rows differ from the ledger."""

    kind: Problem
    table: str
    key: str
    field: str | None  # the column, for a changed value
    ledger: Any  # the value the ledger states (a row's facts for a missing row)
    stored: Any  # the value stored (a row's facts for an unrecorded row)
    exact: bool = False  # a measured value: its digits are shown as a number is

    def one_line(self) -> str:
        """The discrepancy in words, for a person."""
        if self.kind == "changed":
            return (
                f"{self.table} {self.key}: {self.field} is {_shown(self.stored, self.exact)} "
                f"but the ledger says {_shown(self.ledger, self.exact)} (changed without an event)"
            )
        if self.kind == "unrecorded":
            return f"{self.table} {self.key}: a row no event made"
        return f"{self.table} {self.key}: a row the ledger made is gone"

    def as_dict(self) -> dict[str, Any]:
        return {
            "kind": self.kind,
            "table": self.table,
            "key": self.key,
            "field": self.field,
            "ledger": self.ledger,
            "stored": self.stored,
        }


def _shown(value: Any, exact: bool = False) -> str:
    if exact and isinstance(value, str):
        return value  # an exact value's digits (the facts' form), shown as the number it is
    return json.dumps(value, ensure_ascii=False, sort_keys=True)


@dataclass
class Coverage:
    """How much of the books the ledger could speak for."""

    events: int = 0
    legacy_events: int = 0  # events without facts (recorded before events stated them)
    last_legacy: int = 0  # the newest such event (0: none)
    unchecked_rows: dict[str, int] = field(default_factory=dict)  # table -> rows
    unchecked_fields: dict[str, set[str]] = field(default_factory=dict)  # table -> columns

    @property
    def complete(self) -> bool:
        return self.legacy_events == 0

    @property
    def checked_from(self) -> int:
        """The event from which on every row and field is checked."""
        return self.last_legacy + 1

    def statement(self) -> str | None:
        """What could not be checked, said plainly (None when everything was)."""
        if self.complete:
            return None
        said = [
            f"{self.legacy_events} event(s) up to #{self.last_legacy} were recorded before "
            "events stated the facts of the rows they wrote"
        ]
        if self.unchecked_rows:
            rows = ", ".join(f"{n} {table}" for table, n in sorted(self.unchecked_rows.items()))
            said.append(f"rows they made without stating them were not checked ({rows})")
        if self.unchecked_fields:
            fields = "; ".join(
                f"{table}: {', '.join(sorted(names))}"
                for table, names in sorted(self.unchecked_fields.items())
            )
            said.append(
                "of the rows they made, the fields their payloads state were checked and "
                f"these were not (no event stated them since): {fields}"
            )
        said.append("every item they name was checked to exist")
        said.append(f"from event #{self.checked_from} on every row and field is checked")
        return "; ".join(said)


@dataclass
class Scope:
    """The rows an audit of one part of the lab (a loan's report) holds against the ledger.

    ``roots`` are the items whose rows are in scope together with every row that refers
    to them (a loan, its specimens, their powders ...); ``keys`` are items whose own rows
    are in scope without pulling in what refers to them (the loan's lender, its documents).
    A row made by an event and referring to a root becomes a root itself: a specimen the
    stored rows no longer hold is still found, and so are its powders, on the next pass.
    """

    roots: set[str]
    keys: set[str] = field(default_factory=set)

    def names(self) -> set[str]:
        return self.roots | self.keys

    def admits(self, rules: Layout, key: str, facts: dict[str, Any]) -> bool:
        """Is this row (its key and its full facts) in scope?"""
        if key in self.roots or key in self.keys:
            return True
        if not references(rules, facts) & self.roots:
            return False
        if rules.kind is not None:
            self.roots.add(key)
        return True

    def holds(self, key: str) -> bool:
        return key in self.roots or key in self.keys


@dataclass
class Books:
    """Each table's rows as the ledger states them, event after event (within ``scope``)."""

    scope: Scope | None = None
    rows: dict[str, dict[str, list[Any]]] = field(default_factory=dict)
    coverage: Coverage = field(default_factory=Coverage)
    # the first key number of each table's rows made by events with facts
    horizon: dict[str, int] = field(default_factory=dict)
    named: dict[str, dict[str, int]] = field(default_factory=dict)  # by legacy events

    def apply(
        self,
        seq: int,
        at: datetime | str,
        operator: str,
        action: str,
        object_ref: str,
        parent_ref: str,
        payload: str,
    ) -> None:
        """Replay one event."""
        self.coverage.events += 1
        stated = json.loads(payload).get(FACTS) if _STATES_FACTS in payload else None
        if stated is None:
            self._legacy(seq, object_ref, parent_ref)
            if action in legacy.MADE or action.endswith(".corrected"):
                self._legacy_row(at, operator, action, object_ref, json.loads(payload))
            return
        scope = self.scope
        for table, gone in stated.get("deleted", {}).items():
            held = self.rows.get(table, {})
            for key in gone:
                held.pop(key, None)
        for table, made in stated.get("created", {}).items():
            rules = layout(table)
            held = self.rows.setdefault(table, {})
            for key, facts in made.items():
                if scope is not None and not scope.admits(rules, key, facts):
                    continue
                stated_values = [facts.get(column.name) for column in rules.columns]
                held[key] = [v if type(v) is not str else intern(v) for v in stated_values]
                if self.coverage.legacy_events:
                    self._mark_horizon(rules, key)
        for table, changes in stated.get("changed", {}).items():
            rules = layout(table)
            held = self.rows.setdefault(table, {})
            for key, facts in changes.items():
                values = held.get(key)
                if values is None and scope is not None and not scope.holds(key):
                    continue  # out of scope (or an old row of unknown whereabouts)
                if values is None:  # a row an event before the facts made
                    values = held[key] = [UNKNOWN] * len(rules.columns)
                for name, value in facts.items():
                    values[rules.index[name]] = _kept(value)

    def _legacy(self, seq: int, object_ref: str, parent_ref: str) -> None:
        self.coverage.legacy_events += 1
        self.coverage.last_legacy = seq
        for ref in (object_ref, parent_ref):
            where = _row_of(ref)
            if where is not None and (self.scope is None or self.scope.holds(ref)):
                self.named.setdefault(where[0], {}).setdefault(where[1], seq)

    def _legacy_row(
        self, at: datetime | str, operator: str, action: str, ref: str, payload: dict[str, Any]
    ) -> None:
        """What an old event's own payload states of the row it made or corrected."""
        where = _row_of(ref)
        if where is None or (self.scope is not None and not self.scope.holds(ref)):
            return
        table, key = where
        rules = layout(table)
        values = self.rows.setdefault(table, {}).get(key)
        found = legacy.made(action, at, operator, payload)
        if found is not None and found[0] == table:
            values = self.rows[table][key] = [UNKNOWN] * len(rules.columns)
            facts = found[1]
        else:
            facts = legacy.corrected(action, payload) or {}
        if values is None:
            return
        for name, value in facts.items():
            values[rules.index[name]] = value

    def _mark_horizon(self, rules: Layout, key: str) -> None:
        number = _number(rules, key)
        if number is not None and number < self.horizon.get(rules.table, number + 1):
            self.horizon[rules.table] = number

    def compare(
        self, table: str, stored: Iterable[tuple[str, dict[str, Any]]]
    ) -> Iterator[Discrepancy]:
        """Every difference between ``table``'s stored rows (each its key and its facts, as
        :func:`~tracker.domain.facts.row_facts` writes them) and the ledger's, row by row;
        the replayed rows of the table are let go of as they are compared."""
        rules = layout(table)
        held = self.rows.pop(table, {})
        named = self.named.pop(table, {})
        for key, facts in stored:
            named.pop(key, None)
            ledger = held.pop(key, None)
            if ledger is None:
                if self._before_facts(rules, key):
                    unchecked = self.coverage.unchecked_rows
                    unchecked[table] = unchecked.get(table, 0) + 1
                else:
                    yield Discrepancy("unrecorded", table, key, None, None, facts)
                continue
            yield from self._fields(rules, key, ledger, facts)
        for key, values in held.items():
            pairs = zip(rules.columns, values, strict=True)
            said = {column.name: v for column, v in pairs if v is not UNKNOWN}
            yield Discrepancy("missing", table, key, None, said, None)
        for key, seq in named.items():
            yield Discrepancy("missing", table, key, None, {"named by event": seq}, None)

    def _fields(
        self, rules: Layout, key: str, ledger: list[Any], facts: dict[str, Any]
    ) -> Iterator[Discrepancy]:
        for column, said in zip(rules.columns, ledger, strict=True):
            value = facts[column.name]
            if said is UNKNOWN:
                self.coverage.unchecked_fields.setdefault(rules.table, set()).add(column.name)
            elif said != value and not _same_exact(column, said, value):
                exact = column.shape == "exact"
                yield Discrepancy("changed", rules.table, key, column.name, said, value, exact)

    def _before_facts(self, rules: Layout, key: str) -> bool:
        """Could this row have been made by an event that states no facts?"""
        if self.coverage.complete:
            return False
        number = _number(rules, key)
        horizon = self.horizon.get(rules.table)
        return number is None or horizon is None or number < horizon


def _same_exact(column: Column, said: Any, stored: Any) -> bool:
    """An exact value the ledger stated as a JSON float, and the digits stored for it.

    Events recorded before measured values were kept exactly (and old payloads read by
    ``legacy``) state them as floats; the upgrade (revision 0011) stored each float as its
    shortest round-trip text. So the float's shortest text (``repr``, as
    ``base.decimal_from_float`` writes it) is compared with the stored digits as numbers:
    ``1000.0`` and ``1000`` (PostgreSQL's text of the same float) agree; ``6.02`` and
    ``6.0200000000000005`` do not."""
    if column.shape != "exact" or type(said) not in (float, int) or not isinstance(stored, str):
        return False
    try:
        return decimal_from_float(said) == Decimal(stored)
    except InvalidOperation:
        return False


def _kept(value: Any) -> Any:
    """A replayed value as held until its row is compared: text shared between the rows
    that repeat it (statuses, operators, places), so memory follows the distinct values."""
    return intern(value) if type(value) is str else value


def _number(rules: Layout, key: str) -> int | None:
    """The row's number (its primary key's first column), when it is one."""
    head = key.split("/", 1)[0]
    if rules.kind is not None:
        return parse_id(head).number
    return int(head) if head.isdigit() else None


_TABLE_OF_KIND: dict[Kind, str] = {}


def _row_of(ref: str) -> tuple[str, str] | None:
    """The table and key of a public ID an event names (None when it names no row)."""
    if not ref or not looks_like_id(ref):
        return None
    if not _TABLE_OF_KIND:
        for name in described_tables():
            named = layout(name).kind
            if named is not None:
                _TABLE_OF_KIND[named] = name
    table = _TABLE_OF_KIND.get(parse_id(ref).kind)
    return (table, ref) if table is not None else None
