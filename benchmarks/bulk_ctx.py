"""One bulk step's context: who, when, and the ledger append exactly as the services make it.

:meth:`Ctx.record` is :meth:`tracker.services.core.uow.UnitOfWork.record` without a database
round trip: the next sequence number and the previous hash come from memory, the rows the
step made (:meth:`Ctx.new`) and changed (:meth:`Ctx.changed`, the columns told by each
row's own attribute history, as a flush tells the services) become the payload's facts
through the domain's own :class:`~tracker.domain.facts.Written`, and the event row is the
unit of work's own :func:`~tracker.services.core.uow.sealed_event` (canonical JSON, hash, the
signature of the operator's key chosen by the services' ``signer_for``), its mentions
:func:`~tracker.services.core.uow.mention_rows`, so the chain is the one the services would have
written. A bench action's queued label is ``queue_label``'s own row
(:func:`~tracker.services.core.label_queue.label_row`), naming the same event, among its facts.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import datetime, timedelta
from typing import Any, TypeVar

from sqlalchemy.orm.attributes import set_committed_value

from benchmarks.bulk_state import State
from benchmarks.bulk_writer import BulkWriter
from tracker.domain.base import Base, HasPublicId
from tracker.domain.facts import (
    FACTS,
    Written,
    changed_columns,
    layout,
    table_of,
    values_of,
)
from tracker.domain.ledger import Origin
from tracker.domain.models import EventRef, Label, Location, Operator
from tracker.domain.signing import Signer
from tracker.domain.timing import (
    CLOCK_SKEW,
    DEFAULT_BACKDATING_WINDOW,
    Since,
    is_backdated,
    not_before,
    stated_time,
)
from tracker.services.core.label_queue import label_row
from tracker.services.core.uow import mention_rows, sealed_event

T = TypeVar("T", bound=Base)


@dataclass
class Ctx:
    now: datetime
    operator: Operator
    state: State
    writer: BulkWriter
    signer: Signer
    origin: Origin
    written: Written = field(default_factory=Written)
    touched: list[Any] = field(default_factory=list)  # rows made or changed by this step

    def when(self, given: datetime | None, field: str, after: Iterable[Since] = ()) -> datetime:
        """``common.action_time``'s rules (the domain's own functions) without the database.

        The plans state no times, so nothing is ever backdated here; a plan that did would
        need the services (a manager, a BackdatedEntry row), so it is refused outright.
        """
        moment = stated_time(self.now, given, field)
        not_before(field, moment, after, CLOCK_SKEW if given is None else timedelta(0))
        if given is not None and is_backdated(self.now, moment, DEFAULT_BACKDATING_WINDOW):
            raise RuntimeError(f"the bulk executor records no backdated entries ({field})")
        return moment

    def place(self, text: str | None, field: str = "location") -> Location | None:
        return self.state.get(Location, field, text) if text else None

    def new(self, obj: T) -> T:
        """Give a new object the next primary key of its table, remember it, write it later."""
        obj.id = self.state.take_id(type(obj))  # type: ignore[attr-defined]  # every table has one
        self.state.keep(obj)
        self.writer.add(obj)
        self.written.created(obj)
        self.touched.append(obj)
        return obj

    def changed(self, obj: Base) -> None:
        """``obj`` (made by an earlier step) was given new values: write them, state them."""
        self.writer.changed(obj)
        self.touched.append(obj)

    def record(
        self,
        action: str,
        obj: HasPublicId,
        payload: dict[str, Any],
        parent: HasPublicId | None = None,
        label: HasPublicId | None = None,
    ) -> None:
        """Append this step's one custody event (and the label it queued), its facts stated:
        the rows built by the services' own builders, only the head kept in memory."""
        state, code = self.state, self.operator.code
        seq, previous = state.head_seq + 1, state.head_hash
        object_ref, parent_ref = obj.public_id, parent.public_id if parent else ""
        if label is not None:
            row = label_row(label, seq, code, self.now)
            row.id = state.take_id(Label)
            self.writer.add(row)
            self.written.created(row)
        for item in self.touched:
            self.written.changed(item, changed_columns(item))
        mentions = mention_rows(seq, self.written.names(), object_ref, parent_ref)
        for mention in mentions:
            self.writer.add_row(EventRef, mention)
        self.written.created_rows(EventRef.__tablename__, mentions)
        event = sealed_event(
            (seq, previous),
            self.now,
            code,
            self.origin,
            action,
            object_ref,
            parent_ref,
            {**payload, FACTS: self.written.facts()},
            self.signer,
        )
        _settle(self.touched)
        self.writer.add_event(event)
        state.head_seq, state.head_hash = seq, event.hash


def _settle(rows: list[Any]) -> None:
    """The rows' values as written (defaults included): a later step's changes are told
    from these, as a flush tells the services' changes from the rows as loaded."""
    for row in rows:
        values = values_of(row)
        for column in layout(table_of(row)).columns:
            set_committed_value(row, column.attr, values[column.name])
