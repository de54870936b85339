"""One bulk step's context: who, when, and the ledger append exactly as the services make it.

:meth:`Ctx.record` is :meth:`tracker.services.uow.UnitOfWork.record` without a database
round trip: the next sequence number and the previous hash come from memory, the rows the
step made (:meth:`Ctx.new`) and changed (:meth:`Ctx.changed`, the columns told by each
row's own attribute history, as a flush tells the services) become the payload's facts
through the domain's own :class:`~tracker.domain.facts.Written`, the payload goes through
:func:`canonical_json`, and the hash and its signature through its own :func:`seal` with
the operator's key (chosen by the services' ``signer_for``), so the chain is the one the
services would have written. A bench action's queued label is the same row
``queue_label`` writes, naming the same event, and stated among its facts.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import datetime, timedelta
from typing import Any, TypeVar

from sqlalchemy.orm.attributes import set_committed_value

from benchmarks.bulk_state import State
from benchmarks.bulk_writer import BulkWriter
from tracker.domain.authority import FORMAT_2
from tracker.domain.base import Base, HasPublicId
from tracker.domain.facts import (
    FACTS,
    Written,
    changed_columns,
    expanded,
    layout,
    table_of,
    values_of,
)
from tracker.domain.ledger import Origin, canonical_json, seal
from tracker.domain.models import CustodyEvent, EventRef, Label, LabelStatus, Location, Operator
from tracker.domain.signing import Signer
from tracker.domain.timing import (
    CLOCK_SKEW,
    DEFAULT_BACKDATING_WINDOW,
    Since,
    is_backdated,
    not_before,
    stated_time,
)

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
        """Append this step's one custody event (and the label it queued), its facts stated."""
        state, code = self.state, self.operator.code
        seq, previous = state.head_seq + 1, state.head_hash
        object_ref, parent_ref = obj.public_id, parent.public_id if parent else ""
        if label is not None:
            row = {
                "id": state.take_id(Label),
                "item_ref": label.public_id,
                "status": LabelStatus.QUEUED,
                "queued_event_seq": seq,
                "queued_by": code,
                "queued_at": self.now,
                "job_id": None,
            }
            self.writer.add_row(Label, row)
            self.written.created_rows(Label.__tablename__, [row])
        for item in self.touched:
            self.written.changed(item, changed_columns(item))
        mentions = [
            {"seq": seq, "ref": ref}
            for ref in sorted(self.written.names() - {object_ref, parent_ref})
        ]
        for row in mentions:
            self.writer.add_row(EventRef, row)
        self.written.created_rows(EventRef.__tablename__, mentions)
        text = canonical_json({**payload, FACTS: self.written.facts()}, default=expanded)
        _settle(self.touched)
        origin = self.origin
        sealed = seal(
            seq, self.now, code, origin, action, object_ref, parent_ref, previous, text, self.signer
        )
        self.writer.add_row(
            CustodyEvent,
            {
                "seq": seq,
                "at": self.now,
                "operator": code,
                "action": action,
                "object_ref": object_ref,
                "parent_ref": parent_ref,
                "payload": text,
                "prev_hash": previous,
                "hash": sealed.hash,
                "format": FORMAT_2,
                "os_user": origin.os_user,
                "host": origin.host,
                "db_user": origin.db_user,
                "key_id": sealed.key_id,
                "signature": sealed.signature,
            },
        )
        state.head_seq, state.head_hash = seq, sealed.hash


def _settle(rows: list[Any]) -> None:
    """The rows' values as written (defaults included): a later step's changes are told
    from these, as a flush tells the services' changes from the rows as loaded."""
    for row in rows:
        values = values_of(row)
        for column in layout(table_of(row)).columns:
            set_committed_value(row, column.attr, values[column.name])
