"""Reading the custody ledger: verify the chain (and anchors), list events, export them.

Anchors (see :mod:`tracker.domain.anchors`) are the head written to a file outside
the database; :func:`write_anchor` is what return reports and `tracker ledger
anchor` call, :func:`verify_against` what `tracker ledger verify --anchor` calls.
"""

from __future__ import annotations

import io
import json
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Annotated, Any, BinaryIO, Literal, TextIO

from pydantic import BaseModel, Field
from sqlalchemy import (
    ColumnElement,
    Connection,
    Select,
    String,
    Text,
    cast,
    func,
    or_,
    select,
    type_coerce,
)
from sqlalchemy.dialects.postgresql import JSONB

from tracker.db import outputs, stream
from tracker.db.database import Database
from tracker.domain.anchors import (
    MAX_ANCHOR_BYTES,
    Anchor,
    AnchorCheck,
    AnchorError,
    check_anchor,
    make_anchor,
    parse_anchor,
    signature_problem,
)
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.facts import FACTS
from tracker.domain.ledger import (
    LedgerTuple,
    VerifyReport,
    ledger_stamp,
    verify_batches,
    verify_tuples,
)
from tracker.domain.models import CustodyEvent
from tracker.domain.models.ledger import LEDGER_COLUMNS
from tracker.domain.text_rules import json_visible
from tracker.services.core import authority as signing
from tracker.services.core.views import EventView

BATCH = 5000


def stamp_column(backend: str) -> ColumnElement[Any]:
    """The event time as stored: SQLite's text as it is (the walk makes it ISO text, cheaper
    than a million datetimes), PostgreSQL's timestamps as datetimes."""
    if backend != "sqlite":
        return CustodyEvent.at.expression
    return type_coerce(CustodyEvent.at, String)


def _rows(db: Database) -> Iterator[LedgerTuple]:
    """Stream ledger rows in sequence order without holding them all in memory."""
    for batch in _batches(db):
        yield from batch


def _batches(db: Database) -> Iterator[list[LedgerTuple]]:
    """Ledger rows in sequence order, a batch at a time (see :mod:`tracker.db.stream`)."""
    with db.engine.connect() as connection:
        yield from event_batches(connection)


def event_batches(connection: Connection, after: int = 0) -> Iterator[list[LedgerTuple]]:
    """Ledger rows in sequence order (those after event ``after``), a batch at a time, read
    on ``connection``.

    The statement is built by SQLAlchemy and read through the driver's own cursor
    (a server-side cursor on PostgreSQL): verifying a decade's ledger is a million rows,
    and wrapping each in a result row would cost more than hashing it.
    """
    columns = (CustodyEvent.seq, stamp_column(connection.dialect.name), *LEDGER_COLUMNS[2:])
    statement = select(*columns).where(CustodyEvent.seq > after).order_by(CustodyEvent.seq)
    yield from stream.batches(connection, statement, "tracker_ledger_walk", BATCH)


Progress = Callable[[int, int], None]  # (events read, events in the ledger)


def verify(db: Database, progress: Progress | None = None, every: int = 500) -> VerifyReport:
    """Walk the whole chain; the report names the first broken event, if any.

    ``progress`` (optional) is told how far the walk has got every ``every`` events and
    at the end, so a screen can draw a progress bar; it never changes the verdict.
    """
    if progress is None:
        return verify_batches(_batches(db))
    with db.read_session() as session:
        total = session.scalar(select(func.count()).select_from(CustodyEvent)) or 0
    return verify_tuples(_counted(_rows(db), total, progress, max(every, 1)))


def _counted(
    rows: Iterator[LedgerTuple], total: int, progress: Progress, every: int
) -> Iterator[LedgerTuple]:
    done = 0
    progress(0, total)
    for row in rows:
        yield row
        done += 1
        if done % every == 0:
            progress(done, max(total, done))
    progress(done, max(total, done))


def recent_events(
    db: Database,
    limit: int = 50,
    action: str | None = None,
    *,
    operator: str | None = None,
    item: str | None = None,
) -> list[EventView]:
    """Newest events first; optionally those whose action starts with ``action``, recorded by
    ``operator``, or naming ``item`` (a public ID, as the event's object or its parent)."""
    with db.read_session() as session:
        query = listed(db.backend).order_by(CustodyEvent.seq.desc()).limit(limit)
        if action:
            query = query.where(CustodyEvent.action.startswith(action))
        if operator:
            query = query.where(CustodyEvent.operator == operator)
        if item:
            query = query.where(
                or_(CustodyEvent.object_ref == item, CustodyEvent.parent_ref == item)
            )
        return [EventView.of(e) for e in session.execute(query)]


def listed(backend: str) -> Select[Any]:
    """Events as lists and histories show them (``EventView``): the payload's facts are
    left out by the database itself — a manifest's one event states 20,000 rows, and a
    list of events shows none of them."""
    stored = CustodyEvent.payload
    if backend == "sqlite":
        own: ColumnElement[Any] = func.json_remove(stored, f"$.{FACTS}")
        states = func.json_type(stored, f"$.{FACTS}").is_not(None)
    else:
        document = cast(stored, JSONB)
        own = cast(document.op("-")(FACTS), Text)
        states = document.has_key(FACTS)
    return select(
        CustodyEvent.seq,
        CustodyEvent.at,
        CustodyEvent.operator,
        CustodyEvent.action,
        CustodyEvent.object_ref,
        CustodyEvent.parent_ref,
        own.label("payload"),
        CustodyEvent.hash,
        CustodyEvent.os_user,
        CustodyEvent.host,
        CustodyEvent.db_user,
        CustodyEvent.key_id,
        states.label("states_facts"),
    )


class LedgerLine(BaseModel):
    """One line of an exported ledger: every field as hashed (by the line's ``format``), and
    for a signed event its signer's key ID and signature (``null`` for events recorded
    before signing). The public keys are in the events that register them (payload ``key``).
    """

    format: Literal["tracker-ledger/1", "tracker-ledger/2"]
    seq: Annotated[int, Field(ge=1)]
    at: Annotated[str, Field(pattern=r"^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}\.\d{6}Z$")]
    operator: str
    os_user: str  # format 2 only: empty in format 1 lines, and not hashed there
    host: str
    db_user: str
    action: str
    object: str
    parent: str
    prev_hash: Annotated[str, Field(pattern="^[0-9a-f]{64}$")]
    payload: str  # canonical JSON, exactly the bytes that were hashed
    hash: Annotated[str, Field(pattern="^[0-9a-f]{64}$")]
    key_id: Annotated[str, Field(pattern="^[0-9a-f]{16}$")] | None
    signature: Annotated[str, Field(pattern="^[0-9a-f]{128}$")] | None  # over the hash's ASCII


def export_jsonl(db: Database, out: TextIO) -> int:
    """Write one JSON object per event, fields exactly as hashed; returns the count."""
    count = 0
    for row in _rows(db):
        seq, at, operator, action, object_ref, parent_ref, payload, prev_hash, digest = row[:9]
        fmt, os_user, host, db_user, key, signature = row[9:]
        record = {
            "format": fmt,
            "seq": seq,
            "at": ledger_stamp(at),
            "operator": operator,
            "os_user": os_user,
            "host": host,
            "db_user": db_user,
            "action": action,
            "object": object_ref,
            "parent": parent_ref,
            "prev_hash": prev_hash,
            "payload": payload,
            "hash": digest,
            "key_id": key,
            "signature": signature,
        }
        # hidden characters as JSON escapes: the values are exact, and a terminal the export
        # is printed to never receives a raw ESC or bidi control from a stored name
        out.write(json_visible(json.dumps(record, ensure_ascii=False)) + "\n")
        count += 1
    return count


def export_file(db: Database, path: Path, *, force: bool = False) -> tuple[int, outputs.Written]:
    """The ledger as JSON Lines in a new file ``path``, published only once complete."""
    count = 0

    def write(stream: BinaryIO) -> None:
        nonlocal count
        text = io.TextIOWrapper(stream, encoding="utf-8", newline="")
        count = export_jsonl(db, text)
        text.flush()
        text.detach()

    written = outputs.write_new(path, write, "out", force=force, database=db.path, clock=db.clock)
    return count, written


class AnchorFile(BaseModel):
    """An anchor file: the ledger's head kept outside it; format 2 is signed by a manager."""

    format: Literal["tracker-anchor/1", "tracker-anchor/2"]
    seq: Annotated[int, Field(ge=1)]
    hash: Annotated[str, Field(pattern="^[0-9a-f]{64}$")]
    first_hash: Annotated[str, Field(pattern="^[0-9a-f]{64}$")]  # names the ledger
    taken_at: str  # ISO 8601 UTC
    label: str | None = None  # what it was taken for, e.g. a return report
    signed_by: str | None = None  # format 2: the manager whose key signed it
    key_id: Annotated[str, Field(pattern="^[0-9a-f]{16}$")] | None = None
    signature: Annotated[str, Field(pattern="^[0-9a-f]{128}$")] | None = None


def _hash_of(db: Database, seq: int) -> str | None:
    with db.read_session() as session:
        return session.scalar(select(CustodyEvent.hash).where(CustodyEvent.seq == seq))


def _signed(db: Database, actor: str | None, anchor: Anchor) -> Anchor:
    """``anchor`` signed by ``actor``'s unlocked key, which must be a manager's. A ledger that
    has no key yet (kept before signing) gets an unsigned anchor, as before."""
    authority = signing.read(db)
    if not authority.keys:
        return anchor
    if not actor:
        raise InputError("operator", None, "no operator given; an anchor is signed by a manager")
    signer = signing.signer_for(authority, actor, db.keyring)
    assert signer is not None  # the ledger has keys
    if not authority.is_manager(actor):
        role = authority.role(actor) or "stranger to this ledger"
        managers = ", ".join(authority.managers())
        raise RuleViolation(
            "operator",
            actor,
            f"signing an anchor needs an operator with the manager role ({actor} is a {role}); "
            f"ask a manager ({managers}) to do it",
        )
    return anchor.signed(signer, actor)


def current_anchor(db: Database, actor: str | None, label: str | None = None) -> Anchor:
    """The ledger's head now, as an anchor signed by ``actor`` (a manager); refused for an
    empty ledger."""
    with db.read_session() as session:
        head = session.execute(
            select(CustodyEvent.seq, CustodyEvent.hash).order_by(CustodyEvent.seq.desc()).limit(1)
        ).first()
        first = session.scalar(select(CustodyEvent.hash).where(CustodyEvent.seq == 1))
    if head is None or first is None:
        raise RuleViolation("database", db.url, "the ledger has no events to anchor")
    return _signed(db, actor, make_anchor(head.seq, head.hash, first, db.clock(), label))


def anchor_for(
    db: Database, actor: str | None, seq: int, head_hash: str, label: str | None = None
) -> Anchor:
    """An anchor of an event a document shows (a report's head), checked against the ledger
    and signed by ``actor`` (a manager)."""
    if _hash_of(db, seq) != head_hash:
        raise RuleViolation("database", db.url, f"the ledger holds no event #{seq} with that hash")
    first = _hash_of(db, 1)
    assert first is not None  # event #seq exists, so event 1 does
    return _signed(db, actor, make_anchor(seq, head_hash, first, db.clock(), label))


@dataclass(frozen=True)
class WrittenAnchor:
    anchor: Anchor
    file: outputs.Written


def write_anchor(
    db: Database,
    actor: str | None,
    path: Path,
    label: str | None = None,
    *,
    force: bool = False,
) -> WrittenAnchor:
    """Write the current head, signed, to a new file ``path`` (whole or not at all; an
    existing file only with ``force``, kept beside it; never the database:
    :mod:`tracker.db.outputs`)."""
    outputs.check_target(path, "out", force=force, database=db.path)
    anchor = current_anchor(db, actor, label)
    written = outputs.write_new(
        path, anchor.to_text().encode(), "out", force=force, database=db.path, clock=db.clock
    )
    return WrittenAnchor(anchor, written)


def read_anchor(path: Path) -> Anchor:
    """An anchor file, or a one-line refusal naming the file and what is wrong with it."""
    try:
        with path.open("rb") as handle:
            content = handle.read(MAX_ANCHOR_BYTES + 1)
    except OSError as error:
        raise InputError("anchor file", str(path), f"cannot be read ({error.strerror})") from None
    if len(content) > MAX_ANCHOR_BYTES:
        raise InputError("anchor file", str(path), "is too large to be an anchor file")
    try:
        return parse_anchor(content.decode("utf-8"))
    except UnicodeDecodeError:
        raise InputError("anchor file", str(path), "is not UTF-8 text") from None
    except AnchorError as error:
        raise InputError("anchor file", str(path), str(error)) from None


@dataclass(frozen=True)
class AnchoredReport:
    chain: VerifyReport
    anchor: AnchorCheck

    @property
    def ok(self) -> bool:
        return self.chain.ok and self.anchor.ok


def verify_against(
    db: Database, anchor: Anchor, progress: Progress | None = None
) -> AnchoredReport:
    """The whole chain verified, the anchored event still in it with the same hash, and the
    anchor's signature a manager's, by the keys the ledger held at that event."""
    chain = verify(db, progress)
    with db.read_session() as session:
        stored_head = session.scalar(select(func.max(CustodyEvent.seq))) or 0
        anchored_format = session.scalar(
            select(CustodyEvent.format).where(CustodyEvent.seq == anchor.seq)
        )
    check = check_anchor(anchor, _hash_of(db, 1), stored_head, _hash_of(db, anchor.seq))
    if check.ok and anchored_format is not None:
        problem = signature_problem(anchor, signing.upto(db, anchor.seq), anchored_format)
        if problem is not None:
            check = AnchorCheck(False, anchor.seq, anchor.hash, problem)
    return AnchoredReport(chain, check)
