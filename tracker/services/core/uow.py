"""The unit of work: one transaction, one operator, exactly one custody event.

Every service that changes anything runs inside :func:`unit_of_work`. The
transaction takes the writer lock (``BEGIN IMMEDIATE`` on SQLite, an advisory
lock on PostgreSQL), so reading the ledger head, checking rules and appending
the next event cannot interleave with another writer. Leaving the block
without :meth:`UnitOfWork.commit` rolls everything back.

Everyone else waits while a unit of work is open, so a service reads and checks
its input (a whole file, for importers) *before* opening one, and does only the
database's part inside. A writer that waits in vain leaves with ``Busy`` (exit 3)
naming the holder (``tracker.db.writer_lock``).

Every event is signed (:mod:`tracker.services.core.authority`): the unit of work finds its
operator's unlocked, registered key when it opens (or refuses before any work), asks the
ledger — never the ``operator`` table — whether the operator is a manager, and signs the
event's hash when it records it. Whatever :func:`tracker.domain.authority.manager_needed`
says needs a manager is refused otherwise, here as in ``ledger verify``.
"""

from __future__ import annotations

import re
import sys
from collections.abc import Callable, Iterable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from datetime import datetime, timedelta
from typing import Any, Protocol

from sqlalchemy import select
from sqlalchemy.exc import DBAPIError, IntegrityError
from sqlalchemy.orm import Session

from tracker.db import logins
from tracker.db.database import Database
from tracker.db.rows import insert_rows
from tracker.db.writer_lock import WriterLock
from tracker.domain import checks
from tracker.domain.authority import FORMAT_2, Authority, manager_needed
from tracker.domain.base import HasPublicId
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.facts import FACTS, Written, expanded
from tracker.domain.ledger import GENESIS_HASH, Origin, canonical_json, seal
from tracker.domain.models import BackdatedEntry, CustodyEvent, EventRef, Operator, Specimen
from tracker.domain.signing import Signer
from tracker.domain.timeutil import as_utc, iso_utc
from tracker.domain.timing import describe_window, hours_of, show
from tracker.services.core import authority as signing
from tracker.services.core.capture import capturing

Ref = HasPublicId | str | None
# event_ref rows are written by the driver's executemany: an index, never ORM objects here
_EVENT_REF = EventRef.metadata.tables[EventRef.__tablename__]


@dataclass(frozen=True)
class Backdating:
    """An entry dated further back than the lab's window: only a manager may record it."""

    field: str  # the entry's dated field, e.g. "drilled_at"
    stated: datetime
    window: timedelta
    specimen: Specimen | None  # where it sits on a loan's books (None: no one specimen)

    @property
    def window_hours(self) -> int:
        return hours_of(self.window)

    def action(self) -> str:
        """What the manager's refusal says is being done."""
        return (
            f"dating an entry {show(self.stated)}, more than {describe_window(self.window)} back,"
        )

    def payload(self) -> dict[str, Any]:
        """What the event's payload says of it, beside the event's own (recording) time."""
        stated = iso_utc(self.stated)
        return {"field": self.field, "stated_at": stated, "window_hours": self.window_hours}


class Acting(Protocol):
    """Who acts and when: what a row builder needs of a unit of work (and of the
    benchmark's bulk step, which builds the same rows without a session)."""

    operator: Operator
    now: datetime


@dataclass
class UnitOfWork:
    session: Session
    operator: Operator
    now: datetime
    # who may sign (from the ledger), the key this unit signs with, where it comes from;
    # a ledger kept before signing has no key yet: then ``signer`` is None until a manager
    # registers their own first key (``keys.register_key`` sets it)
    authority: Authority = field(default_factory=Authority)
    signer: Signer | None = None
    origin: Origin = field(default_factory=lambda: Origin("", ""))
    events: list[CustodyEvent] = field(default_factory=list)
    committed: bool = False
    # Rows that must name this unit's event (a queued label names the event that queued
    # it) are added by these hooks, given the event's number, just before the event is
    # written: so they are among the rows its facts state.
    naming_event: list[Callable[[int], None]] = field(default_factory=list)
    # Further items this unit's event concerns (a manifest's specimens, a print job's labels).
    mentions: set[str] = field(default_factory=set)
    # Set by ``common.action_time`` when the entry is dated beyond the lab's window: recording
    # it then needs a manager, its event's payload says so and a BackdatedEntry row names it.
    backdated: Backdating | None = None
    # Lets go of what announces this writer to waiters, just before COMMIT releases the lock.
    release: Callable[[], None] = lambda: None
    # Set when a service asked for a manager: the event must then say why, in a way the
    # verifier reads (``manager_needed``), or a technician's forged copy would pass it.
    manager_asked: str | None = None
    # Every row this unit writes: the session's flushes tell it (services.capture), and so
    # must whatever writes rows past the session (insert_rows).
    written: Written = field(default_factory=Written)
    sealed: Callable[[], None] = lambda: None  # no row may be written once facts are taken

    def mention(self, *refs: str) -> None:
        """Make the event findable from each of these items' history (every item whose rows
        the unit writes is mentioned anyway: ``Written.names``)."""
        self.mentions.update(ref for ref in refs if ref)

    def require_manager(self, action: str) -> None:
        """Refuse an action reserved for managers: who tried, what it needs, who can do it.

        The role is the ledger's (signed events), never the ``operator`` table's."""
        code = self.operator.code
        if self.authority.is_manager(code):
            self.manager_asked = self.manager_asked or action
            return
        managers = self.authority.managers()
        who = f"; ask a manager ({', '.join(managers)}) to do it" if managers else ""
        role = self.authority.role(code) or self.operator.role.value
        raise RuleViolation(
            "operator",
            code,
            f"{action} needs an operator with the manager role ({code} is a {role}){who}",
        )

    def record(
        self, action: str, obj: Ref, payload: dict[str, Any], parent: Ref = None
    ) -> CustodyEvent:
        """Append this unit's one custody event, chained to the current head and signed.

        Its payload states the facts of every row the unit wrote (``domain.facts``),
        the rows that name the event (labels, corrections ...) and its mentions included.
        """
        if self.events:
            raise RuntimeError("a service records exactly one custody event")
        if self.backdated is not None:  # last: refusals about the entry itself come first
            self.require_manager(self.backdated.action())
            payload = {**payload, "backdated": self.backdated.payload()}
        text = canonical_json(payload, default=expanded)
        needed = manager_needed(action, self.operator.code, text)
        if needed is not None:  # the verifier's own rule: no service can forget it
            self.require_manager(needed)
        elif self.manager_asked is not None:
            raise RuntimeError(
                f"{action}: {self.manager_asked!r} needed a manager, but manager_needed cannot "
                "tell so from the event: extend tracker.domain.authority.manager_needed"
            )
        if self.signer is None:
            raise RuleViolation("operator", self.operator.code, signing.NO_KEYS_YET)
        self.session.flush()  # new rows get their IDs before the event names them
        link = next_link(self.session)
        object_ref, parent_ref = _ref(obj), _ref(parent)
        if self.backdated is not None:
            self.session.add(self._backdated_row(link[0], object_ref, self.backdated))
        for hook in self.naming_event:
            hook(link[0])
        self.session.flush()
        names = self.mentions | self.written.names()
        mentions = mention_rows(link[0], names, object_ref, parent_ref)
        self.written.created_rows(_EVENT_REF.name, mentions)
        payload = {**payload, FACTS: self.written.facts()}
        self.sealed()
        event = append_event(
            self.session,
            at=self.now,
            operator=self.operator.code,
            action=action,
            object_ref=object_ref,
            parent_ref=parent_ref,
            payload=payload,
            signer=self.signer,
            origin=self.origin,
            link=link,
        )
        self.events.append(event)
        if mentions:  # set-based: a manifest's one event can mention 100,000 specimens
            insert_rows(self.session.connection(), _EVENT_REF, mentions)
        return event

    def _backdated_row(self, seq: int, item: str, entry: Backdating) -> BackdatedEntry:
        specimen = entry.specimen
        return BackdatedEntry(
            event_seq=seq,
            item_ref=item,
            field=entry.field,
            stated_at=entry.stated,
            recorded_at=self.now,
            window_hours=entry.window_hours,
            recorded_by=self.operator.code,
            loan_id=specimen.loan_id if specimen is not None else None,
            specimen_id=specimen.id if specimen is not None else None,
        )

    def commit(self) -> None:
        if len(self.events) != 1:
            raise RuntimeError("a service must record exactly one custody event before commit")
        self.session.flush()  # the long part of committing, still announced to waiters
        self.release()
        self.session.commit()
        self.committed = True


def _ref(obj: Ref) -> str:
    if obj is None:
        return ""
    return obj if isinstance(obj, str) else obj.public_id


def append_event(
    session: Session,
    *,
    at: datetime,
    operator: str,
    action: str,
    object_ref: str,
    parent_ref: str,
    payload: dict[str, Any],
    signer: Signer,
    origin: Origin,
    link: tuple[int, str] | None = None,
) -> CustodyEvent:
    """Write the next ledger event, signed; the caller must hold the writer lock.

    ``link`` is the event's number and the previous hash when the caller has read them
    (:func:`next_link`) to name the event in rows written before it.
    """
    seq, prev = link or next_link(session)
    event = sealed_event(
        (seq, prev), at, operator, origin, action, object_ref, parent_ref, payload, signer
    )
    session.add(event)
    session.flush()
    return event


def sealed_event(
    link: tuple[int, str],
    at: datetime,
    operator: str,
    origin: Origin,
    action: str,
    object_ref: str,
    parent_ref: str,
    payload: dict[str, Any],
    signer: Signer,
) -> CustodyEvent:
    """The event row itself, its payload canonical and its hash signed, not yet added.

    The one place an event row is built: the unit of work adds it to its session, the
    benchmark's bulk writer (which keeps the head in memory) batches it.
    """
    seq, prev = link
    text = canonical_json(payload, default=expanded)  # rows written set-based, row by row
    sealed = seal(seq, at, operator, origin, action, object_ref, parent_ref, prev, text, signer)
    return CustodyEvent(
        seq=seq,
        at=at,
        operator=operator,
        action=action,
        object_ref=object_ref,
        parent_ref=parent_ref,
        payload=text,
        prev_hash=prev,
        hash=sealed.hash,
        format=FORMAT_2,
        os_user=origin.os_user,
        host=origin.host,
        db_user=origin.db_user,
        key_id=sealed.key_id,
        signature=sealed.signature,
    )


def mention_rows(
    seq: int, names: Iterable[str], object_ref: str, parent_ref: str
) -> list[dict[str, Any]]:
    """The event's ``event_ref`` rows: every name its rows bear but its object and parent."""
    return [{"seq": seq, "ref": ref} for ref in sorted(set(names) - {object_ref, parent_ref})]


def next_link(session: Session) -> tuple[int, str]:
    """The next event's number and the hash it chains to (the caller holds the writer lock)."""
    head = session.execute(
        select(CustodyEvent.seq, CustodyEvent.hash).order_by(CustodyEvent.seq.desc()).limit(1)
    ).first()
    return (head.seq + 1, head.hash) if head else (1, GENESIS_HASH)


@contextmanager
def unit_of_work(db: Database, actor: str | None, doing: str = "") -> Iterator[UnitOfWork]:
    """Open a write transaction as ``actor``; roll back unless the service commits.

    ``doing`` is what a writer kept waiting is told this one is doing ("import lender
    manifest"); by default the name of the service that opened the unit of work.
    """
    session = db.write_session()
    lock = WriterLock(db.engine, actor or "(no operator)", doing or _calling_service())
    try:
        session.begin()
        lock.take(session)  # waits for other writers; Busy, naming the holder, if in vain
        operator = find_operator(session, actor)
        if db.backend == "postgresql":
            agree_with_login(session, operator)
        authority = signing.current(session, db)
        uow = UnitOfWork(
            session,
            operator,
            as_utc(db.clock()),
            authority,
            signing.signer_for(authority, operator.code, db.keyring),
            signing.origin(session, db),
            release=lock.release,
        )
        with capturing(session, uow.written) as capture:
            uow.sealed = capture.seal
            yield uow
        if not uow.committed:
            lock.release()
            session.rollback()
    except DBAPIError as error:
        lock.release()
        session.rollback()
        broken = _check_broken(error)
        if broken is not None:
            raise broken from None
        if getattr(error.orig, "sqlstate", None) != INSUFFICIENT_PRIVILEGE:
            raise
        raise _refused(error) from None
    except BaseException:
        lock.release()
        session.rollback()
        raise
    finally:
        session.close()


def _calling_service() -> str:
    """The name of the service function that opened the unit of work, said in words."""
    frame = sys._getframe(1)
    while frame.f_back is not None and frame.f_globals.get("__name__") in (__name__, "contextlib"):
        frame = frame.f_back
    return frame.f_code.co_name.strip("_").replace("_", " ") or "a write"


# PostgreSQL's SQLSTATE for "permission denied", also raised by revision 0010's login checks.
INSUFFICIENT_PRIVILEGE = "42501"


def agree_with_login(session: Session, operator: Operator) -> None:
    """On PostgreSQL a login writes as the operator bound to it, and as no one else.

    The tables' owner (and a superuser) may write as any operator: it sets the database
    up and could rewrite anything by SQL anyway. Any other login bound to no operator
    writes nothing. The database holds every login to the same rule (revision 0010); this
    check says it first, in a person's words.
    """
    who = logins.connected(session.connection())
    if who.owner:
        return
    bound = session.scalar(select(Operator.code).where(Operator.login == who.login))
    if bound is None:
        raise RuleViolation(
            "database",
            who.login,
            "this database login is bound to no operator; a manager binds it to one",
        )
    if bound != operator.code:
        raise RuleViolation(
            "operator",
            operator.code,
            f"this database login ({who.login}) records as {bound} only; "
            "each person connects with their own login",
        )


def _check_broken(error: DBAPIError) -> RuleViolation | None:
    """A value the schema refuses as never true (``domain.checks``), said in one line.

    The services check every value first, so this is a service's missed rule; the
    person still reads one line and nothing is written."""
    if not isinstance(error, IntegrityError):
        return None
    diag = getattr(error.orig, "diag", None)  # PostgreSQL names the constraint
    name = getattr(diag, "constraint_name", None)
    if name is None:  # SQLite: "CHECK constraint failed: <name>"
        found = re.search(r"CHECK constraint failed: (\w+)", str(error.orig))
        name = found.group(1) if found else None
    sentence = checks.said(name) if name else None
    if sentence is None:
        return None
    return RuleViolation("database", None, f"the database refused a value: {sentence}")


def _refused(error: DBAPIError) -> RuleViolation:
    """The database refused a write for want of a privilege or by a login rule: one line."""
    cause = str(error.orig).strip().splitlines()[0] if error.orig else "permission denied"
    hint = ""
    if cause.startswith("permission denied"):
        hint = " (after an upgrade the owner grants the workstation group its privileges again)"
    return RuleViolation("database", None, f"the database refused this: {cause}{hint}")


def find_operator(session: Session, actor: str | None) -> Operator:
    if not actor:
        raise InputError("operator", None, "no operator given")
    operator = session.scalars(select(Operator).where(Operator.code == actor)).one_or_none()
    if operator is None:
        raise InputError("operator", actor, "no such operator")
    if not operator.active:
        raise RuleViolation("operator", actor, "this operator has been deactivated")
    return operator
