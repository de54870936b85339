"""Every row a unit of work writes, told to its :class:`~tracker.domain.facts.Written`.

The session's own flushes say what was inserted, updated (with each column's history) and
deleted, so no service has to list what it wrote: the facts in its event are the rows
themselves. Rows written past the session (``insert_rows``: manifests, ledger mentions)
are told to ``Written`` by whoever writes them.

Once the event's facts are taken the capture is sealed: a row written after that would be
a row no event describes, so the flush that carries it is refused, and so is any UPDATE,
DELETE or INSERT statement sent through the session, which a flush would never see.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass

from sqlalchemy import event
from sqlalchemy.orm import ORMExecuteState, Session, UOWTransaction

from tracker.domain.facts import Written, changed_columns
from tracker.domain.models import CustodyEvent


@dataclass
class Capture:
    written: Written
    sealed: bool = False

    def after_flush(self, session: Session, _: UOWTransaction) -> None:
        new = [o for o in session.new if not isinstance(o, CustodyEvent)]
        dirty = [(o, changed_columns(o)) for o in session.dirty if not isinstance(o, CustodyEvent)]
        if self.sealed:
            late = [*new, *session.deleted, *(o for o, columns in dirty if columns)]
            if late:
                raise RuntimeError(
                    f"a {type(late[0]).__name__} row written after its unit's event was recorded"
                )
            return
        for obj in new:
            self.written.created(obj)
        for obj, columns in dirty:
            self.written.changed(obj, columns)
        for obj in session.deleted:
            self.written.deleted(obj)

    def seal(self) -> None:
        """The event's facts are taken: from now on no row may be written."""
        self.sealed = True

    def statement(self, state: ORMExecuteState) -> None:
        if state.is_insert or state.is_update or state.is_delete:
            raise RuntimeError(
                "rows are written through the session (or insert_rows, told to Written): "
                "a statement would change rows no event describes"
            )


@contextmanager
def capturing(session: Session, written: Written) -> Iterator[Capture]:
    """Tell ``written`` about every row the session flushes while the block runs."""
    capture = Capture(written)
    event.listen(session, "after_flush", capture.after_flush)
    event.listen(session, "do_orm_execute", capture.statement)
    try:
        yield capture
    finally:
        event.remove(session, "after_flush", capture.after_flush)
        event.remove(session, "do_orm_execute", capture.statement)
