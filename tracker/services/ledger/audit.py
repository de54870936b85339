"""The books against the ledger: replay every event's facts, then compare every stored row.

The chain proves the ledger; nothing else proved the rows that reconciliation, reports,
labels and results are computed from. :func:`audit` replays the ledger from event 1 (one
streaming pass that also verifies the chain, so the facts replayed are the facts hashed)
and holds every row of every table the events describe against what the ledger says of
it (``domain.replay``): a value changed without an event, a row no event made, a row an
event made that is gone. Everything is read in one snapshot, so a writer working
meanwhile can neither hide a discrepancy nor make one up.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from sqlalchemy import Connection, Select, Table, func, select

from tracker.db import stream
from tracker.db.database import Database
from tracker.domain.base import Base
from tracker.domain.errors import RuleViolation
from tracker.domain.facts import Layout, described_tables, layout, row_facts
from tracker.domain.ledger import LedgerTuple, VerifyReport, verify_batches
from tracker.domain.models import CustodyEvent
from tracker.domain.replay import Books, Coverage, Discrepancy
from tracker.services.core.views import View
from tracker.services.ledger.chain import event_batches
from tracker.services.ledger.checkpoints import keep

Progress = Callable[[int, int], None]  # (events and rows read, events and rows in all)
SHOWN = 3  # discrepancies named in a one-line verdict
AUDIT_COMMAND = "tracker ledger audit"


class DiscrepancyView(View):
    """One discrepancy, as a report or an export lists it."""

    kind: str  # changed, unrecorded (no event made the row), missing (a row the ledger made)
    table: str
    key: str
    field: str | None
    ledger: Any
    stored: Any
    said: str  # the whole of it in words

    @classmethod
    def of(cls, found: Discrepancy) -> DiscrepancyView:
        return cls(**found.as_dict(), said=found.one_line())


@dataclass(frozen=True)
class AuditReport:
    """The chain's verdict, and every way the stored rows differ from the ledger's."""

    chain: VerifyReport
    discrepancies: list[Discrepancy]
    coverage: Coverage
    rows: int  # stored rows compared
    scope: str = ""  # what was audited when not the whole lab ("loan KF-2026-014")
    # the events up to this one were verified before (this computer's checkpoint), and when
    checkpoint: tuple[int, datetime] | None = None
    note: str | None = None  # a checkpoint found and not trusted, and why
    # the books up to this event agreed in a whole-lab audit on this computer, and when: only
    # what changed since was audited (reconcile of every loan)
    audited_to: tuple[int, datetime] | None = None

    @property
    def ok(self) -> bool:
        return self.chain.ok and not self.discrepancies

    def verdict(self) -> str:
        """One line: agreed, or the first discrepancies and how many there are."""
        if not self.chain.ok:
            return (
                f"books not audited: the ledger is broken at event #{self.chain.broken_seq} "
                f"({self.chain.reason})"
            )
        books = f"the books of {self.scope}" if self.scope else "books"
        if not self.discrepancies:
            agree = (
                f"{books} agree with the ledger: {self.rows:,} rows, "
                f"{self.coverage.events:,} events replayed"
            )
            if self.audited_to is not None:
                seq, at = self.audited_to
                agree += (
                    f" (the whole lab's agreed up to event #{seq:,} in this computer's audit "
                    f"of {at:%Y-%m-%d %H:%M} UTC)"
                )
            if self.coverage.complete:
                return agree
            return (
                f"{agree}, but only where it states them: events up to "
                f"#{self.coverage.last_legacy} stated no facts (see what was not checked)"
            )
        first = "; ".join(d.one_line() for d in self.discrepancies[:SHOWN])
        more = len(self.discrepancies) - SHOWN
        tail = f"; and {more:,} more" if more > 0 else ""
        count = len(self.discrepancies)
        return f"{books} DIFFER from the ledger in {count:,} place(s): {first}{tail}"

    def views(self) -> list[DiscrepancyView]:
        return [DiscrepancyView.of(found) for found in self.discrepancies]

    def vouch(self, field: str, value: str, *, despite: bool) -> list[DiscrepancyView]:
        """What a report or an export of these books must list: nothing when they agree
        with the ledger; when they differ, refused — unless written ``despite`` them, then
        every discrepancy, to be shown with what is written."""
        if not self.discrepancies:
            return []
        if not despite:
            raise RuleViolation(
                field,
                value,
                f"{self.verdict()}; refused — the audit of the books lists them; made despite "
                "the discrepancies, it lists every one",
            )
        return self.views()

    def as_dict(self) -> dict[str, Any]:
        coverage = self.coverage
        return {
            "ok": self.ok,
            "scope": self.scope or "the whole lab",
            "chain_ok": self.chain.ok,
            "events": self.chain.events,
            "head_hash": self.chain.head_hash,
            "broken_seq": self.chain.broken_seq,
            "rows": self.rows,
            "discrepancies": [d.as_dict() for d in self.discrepancies],
            "complete": coverage.complete,
            "checked_from_event": coverage.checked_from,
            "not_checked": coverage.statement(),
            "unchecked_rows": dict(sorted(coverage.unchecked_rows.items())),
            "unchecked_fields": {
                table: sorted(names) for table, names in sorted(coverage.unchecked_fields.items())
            },
        }


def audit(db: Database, progress: Progress | None = None, every: int = 500) -> AuditReport:
    """Replay the whole ledger and compare every described row (see the module)."""
    tick = progress or (lambda done, total: None)
    with stream.snapshot(db.engine) as connection:
        total = _size(connection) if progress is not None else 0
        counted = _Counter(tick, total, max(every, 1))
        books = Books()
        chain = verify_batches(_replayed(event_batches(connection), books, counted))
        if not chain.ok:
            return AuditReport(chain, [], books.coverage, 0)
        found: list[Discrepancy] = []
        for name in described_tables():
            stored = counted.rows(_stored_all(connection, name))
            found.extend(books.compare(name, stored))
        counted.finish()
    # the whole chain verified, and the books agreeing with it: this computer's checkpoint
    keep(db, chain, db.clock(), audit="dropped" if found else "now")
    return AuditReport(chain, found, books.coverage, counted.rows_seen)


@dataclass
class _Counter:
    """Tells ``progress`` how far the audit has got: events first, then rows."""

    progress: Progress
    total: int
    every: int
    done: int = 0
    rows_seen: int = 0

    def step(self) -> None:
        self.done += 1
        if self.done % self.every == 0:
            self.progress(self.done, max(self.total, self.done))

    def rows(self, stored: Iterable[tuple[str, dict[str, Any]]]) -> Iterator[tuple[str, Any]]:
        for row in stored:
            self.rows_seen += 1
            self.step()
            yield row

    def finish(self) -> None:
        self.progress(self.done, max(self.total, self.done))


def _size(connection: Connection) -> int:
    """Events and described rows in all (for a progress bar)."""
    tables = [_table(name) for name in described_tables()]
    counts = [select(func.count()).select_from(table) for table in tables]
    counts.append(select(func.count()).select_from(CustodyEvent))
    return sum(connection.scalar(query) or 0 for query in counts)


def _replayed(
    batches: Iterable[list[LedgerTuple]], books: Books, counted: _Counter
) -> Iterator[list[LedgerTuple]]:
    """The ledger's batches as read, each event replayed into ``books`` as it passes on to
    the chain's verification (which stops at a broken link: the replay stops with it)."""
    counted.progress(0, counted.total)
    for batch in batches:
        yield batch
        for seq, at, operator, action, object_ref, parent_ref, payload, *_ in batch:
            books.apply(seq, at, operator, action, object_ref, parent_ref, payload)
            counted.step()


def _stored_all(connection: Connection, name: str) -> Iterator[tuple[str, dict[str, Any]]]:
    return stored(connection, name)


def _table(name: str) -> Table:
    return Base.metadata.tables[name]


def stored(
    connection: Connection, name: str, statement: Select[Any] | None = None
) -> Iterator[tuple[str, dict[str, Any]]]:
    """Each stored row of ``name`` (those ``statement`` selects, or all): its key and its
    facts, read through the columns' own types; a value no type can read (a tamperer's
    text in a time column) is said as such."""
    table = _table(name)
    rules = layout(name)
    dialect = connection.dialect
    columns = list(table.columns)
    readers: list[Any] = []

    shapes = {column.name: column.shape for column in (*rules.key, *rules.columns)}

    def described(description: Sequence[Any]) -> None:
        """The column's own reader, for the driver's type of it, where the facts need one
        (structured JSON); every other value is written as a fact from what the driver
        gives (times as SQLite stores them included: ``domain.ledger.ledger_stamp``)."""
        readers.extend(
            c.type.dialect_impl(dialect).result_processor(dialect, d[1])
            if shapes[c.key] == "json"
            else None
            for c, d in zip(columns, description, strict=True)
        )

    query = select(table) if statement is None else statement
    for batch in stream.batches(connection, query, f"tracker_audit_{name}", described=described):
        for raw in batch:
            values: dict[str, Any] = {}
            unreadable: dict[str, Any] = {}
            for column, read, value in zip(columns, readers, raw, strict=True):
                if read is not None and value is not None:
                    try:
                        value = read(value)
                    except (ValueError, TypeError, LookupError):
                        unreadable[column.key] = value
                values[column.key] = value
            yield rules.key_of(values), _facts(rules, values, unreadable)


def _facts(rules: Layout, values: dict[str, Any], unreadable: dict[str, Any]) -> dict[str, Any]:
    """The row's facts; a value that cannot be read (or written as a fact) is shown as
    the text it is, so it differs from anything the ledger states."""
    if not unreadable:
        try:
            return row_facts(rules, values)
        except (ValueError, TypeError, KeyError, AttributeError):
            pass
    facts: dict[str, Any] = {}
    for column in rules.columns:
        value = values.get(column.name)
        try:
            if column.name in unreadable:
                raise ValueError(value)
            facts[column.name] = column.convert(value)
        except (ValueError, TypeError, KeyError, AttributeError):
            facts[column.name] = f"unreadable: {value!r}"
    return facts
