"""The custody ledger's canonical form, hashing and chain verification (pure functions).

Canonical serialisation of event *n* (format "tracker-ledger/1") is the UTF-8
encoding of these eight fields joined by a line feed (0x0A), no trailing LF::

    tracker-ledger/1
    <seq>            decimal, 1, 2, 3 ... without gaps
    <at>             ISO 8601 UTC, microseconds, "Z": 2026-03-04T09:15:00.000000Z
    <operator>       the operator's code
    <action>         e.g. "powder.drilled"
    <object>         public ID of the item acted on (may be empty)
    <parent>         public ID of the item it came from or went into (may be empty)
    <prev_hash>      hex SHA-256 of event n-1; 64 zeros for event 1
    <payload>        the payload as stored: JSON, keys sorted, no spaces

and ``hash`` is the lower-case hex SHA-256 of those bytes. No field may contain
a line feed (the payload's JSON escapes its own). A lender re-verifies an
exported ledger by recomputing each hash and checking that each ``prev_hash``
equals the previous line's ``hash`` — nothing needs re-serialising.

Format "tracker-ledger/2" (every event recorded since signing began) adds where the event
came from, after the operator; the bytes are these twelve fields joined the same way::

    tracker-ledger/2
    <seq>
    <at>
    <operator>
    <os_user>        the operating-system user that ran tracker
    <host>           the computer's host name
    <db_user>        PostgreSQL's session_user (the database enforces it); empty on SQLite
    <action>
    <object>
    <parent>
    <prev_hash>
    <payload>

Each such event also stores, outside the hashed bytes, its signer's key ID and the Ed25519
signature of the 64 ASCII characters of its ``hash`` (:mod:`tracker.domain.signing`); the
signature covers the hash, and the hash covers everything else. Who may sign what is
:mod:`tracker.domain.authority`. Events of either format verify by their own rule; the
format of each is stored with it.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from datetime import datetime
from typing import Any, NamedTuple

from tracker.domain.authority import AUTHORITY_ACTIONS, FORMAT_1, FORMAT_2, Authority, Claim
from tracker.domain.signing import Signer
from tracker.domain.timeutil import iso_utc

FORMAT = FORMAT_1  # the first format: events recorded before signing
CURRENT_FORMAT = FORMAT_2  # every event recorded now
GENESIS_HASH = "0" * 64
# An empty ledger proves nothing: every database opens its ledger with a first event, so a
# ledger without one has lost it (or never was one) and is not intact.
EMPTY = "the ledger holds no events, not even the first one, recorded when it was made"


def canonical_json(payload: Any, default: Callable[[Any], Any] | None = None) -> str:
    """JSON with sorted keys and no insignificant white space; NaN and Infinity refused.

    ``default`` turns an object JSON has no form for into one it has (``facts.expanded``:
    a row kept small until written); what it returns is written by the same rules.
    """
    return json.dumps(
        payload,
        sort_keys=True,
        separators=(",", ":"),
        ensure_ascii=False,
        allow_nan=False,
        default=default,
    )


class Origin(NamedTuple):
    """Where an event comes from: the OS user and host that ran tracker, and the database
    login (PostgreSQL's ``session_user``, read from the server; empty on SQLite)."""

    os_user: str
    host: str
    db_user: str = ""


# Events of format 1 do not say where they came from: their origin is not hashed.
NO_ORIGIN = Origin("", "")

# How many line feeds each format's bytes hold: one per field after the first. A field with a
# line feed of its own would shift the fields after it, so the count is the check.
_LINE_FEEDS = {FORMAT_1: 8, FORMAT_2: 11}


def ledger_stamp(at: datetime | str) -> str:
    """An event's time in the ledger's ISO form, from a datetime, ISO text or SQLite's stored
    text (``2026-03-04 09:15:00.000000``: SQLAlchemy's format, always with microseconds, UTC),
    which differs from the ISO form only by its "T" and "Z". Text of any other shape is taken
    as it stands (hashed so, it fails: tracker never writes it)."""
    if not isinstance(at, str):
        return iso_utc(at)
    if len(at) == 26 and at[10] == " ":
        return f"{at[:10]}T{at[11:]}Z"
    return at


def canonical_bytes(
    fmt: str,
    seq: int,
    at: datetime | str,
    operator: str,
    origin: Origin,
    action: str,
    object_ref: str,
    parent_ref: str,
    prev_hash: str,
    payload: str,
) -> bytes:
    """The exact bytes hashed for an event of format ``fmt`` (see the module docstring).

    ``origin`` is hashed by format 2 only. A field holding a line feed, or a format this
    module does not know, raises ValueError.
    """
    stamp = ledger_stamp(at)
    fields: tuple[str, ...]
    if fmt == FORMAT_2:
        fields = (fmt, str(seq), stamp, operator, *origin, action, object_ref, parent_ref)
    elif fmt == FORMAT_1:
        fields = (fmt, str(seq), stamp, operator, action, object_ref, parent_ref)
    else:
        raise ValueError(f"unknown ledger format {fmt[:40]!r}")
    text = "\n".join((*fields, prev_hash, payload))
    if text.count("\n") != _LINE_FEEDS[fmt]:
        value = next(v for v in (*fields, prev_hash, payload) if "\n" in v)
        raise ValueError(f"ledger field contains a line feed: {value[:40]!r}")
    return text.encode("utf-8")


def event_hash(
    fmt: str,
    seq: int,
    at: datetime | str,
    operator: str,
    origin: Origin,
    action: str,
    object_ref: str,
    parent_ref: str,
    prev_hash: str,
    payload: str,
) -> str:
    """An event's hash, by its own format: what every writer (through :func:`seal`), the
    verification, the audit and the benchmark compute, here and nowhere else."""
    data = canonical_bytes(
        fmt, seq, at, operator, origin, action, object_ref, parent_ref, prev_hash, payload
    )
    return hashlib.sha256(data).hexdigest()


@dataclass(frozen=True)
class Sealed:
    """A new event's hash and its operator's signature of it."""

    hash: str
    key_id: str
    signature: str


def seal(
    seq: int,
    at: datetime,
    operator: str,
    origin: Origin,
    action: str,
    object_ref: str,
    parent_ref: str,
    prev_hash: str,
    payload: str,
    signer: Signer,
) -> Sealed:
    """Hash a new event (format 2) and sign its hash: what every writer of events calls —
    the unit of work, ``tracker init`` and the benchmark's bulk writer alike."""
    digest = event_hash(
        FORMAT_2, seq, at, operator, origin, action, object_ref, parent_ref, prev_hash, payload
    )
    return Sealed(digest, signer.key_id, signer.sign_hash(digest))


@dataclass(frozen=True)
class LedgerRow:
    """The stored columns of one event, as read back for verification."""

    seq: int
    at: datetime | str
    operator: str
    action: str
    object_ref: str
    parent_ref: str
    payload: str
    prev_hash: str
    hash: str
    format: str = FORMAT_1
    os_user: str = ""
    host: str = ""
    db_user: str = ""
    key_id: str | None = None
    signature: str | None = None


@dataclass(frozen=True)
class VerifyReport:
    ok: bool
    events: int  # events walked by this verification
    head_seq: int
    head_hash: str
    broken_seq: int | None = None
    reason: str | None = None
    signed: int = 0  # events whose signature was checked and held
    unsigned: int = 0  # events recorded before signing began (format 1): never "valid"
    signing_since: int | None = None  # the first signed event
    verified_from: int = 1  # the first event walked; earlier ones rest on a checkpoint


@dataclass(frozen=True)
class Since:
    """Where a walk starts when events 1..``seq`` were verified before (a checkpoint kept
    outside the database): the hash event ``seq`` had then, and the authority as it stood
    there (replayed from the authority events up to it)."""

    seq: int
    hash: str
    authority: Authority


def verify_chain(rows: Iterable[LedgerRow]) -> VerifyReport:
    """Walk events in ``seq`` order; stop at the first broken link and say why."""
    return verify_tuples(
        (
            r.seq,
            r.at,
            r.operator,
            r.action,
            r.object_ref,
            r.parent_ref,
            r.payload,
            r.prev_hash,
            r.hash,
            r.format,
            r.os_user,
            r.host,
            r.db_user,
            r.key_id,
            r.signature,
        )
        for r in rows
    )


# The stored columns of one event as a plain tuple, in LedgerRow's order: the service streams
# these straight from the driver (a million events: no object per row).
LedgerTuple = tuple[
    int,
    "datetime | str",
    str,
    str,
    str,
    str,
    str,
    str,
    str,
    str,
    str,
    str,
    str,
    "str | None",
    "str | None",
]


def verify_tuples(rows: Iterable[LedgerTuple]) -> VerifyReport:
    """Walk events in ``seq`` order; stop at the first broken link and say why."""
    return verify_batches((rows,))


def verify_batches(
    batches: Iterable[Iterable[LedgerTuple]], since: Since | None = None
) -> VerifyReport:
    """Walk events in ``seq`` order, batch after batch; stop at the first broken link.

    Checks, in order, for each event: the sequence continues without a gap, its
    ``prev_hash`` is the previous event's hash, its stored hash matches its recomputed
    hash (:func:`stored_hash_holds`, by its own format; a field holding a line feed counts
    as altered), and — through :meth:`Authority.admit` — its signature, made by a key
    valid for its operator at that point of the ledger, and a manager's wherever one is
    needed. Streaming: memory does not grow with the ledger. Events accepted so far are
    always 1..expected - 1. A ledger with no event 1 — empty, or starting later — is not
    intact. ``at`` may be a datetime, the ledger's ISO text or SQLite's stored text
    (:func:`ledger_stamp`).

    ``since`` starts the walk after a point verified before: the batches then hold the
    events after ``since.seq`` only, the first of which must link to ``since.hash``.
    """
    start = 1 if since is None else since.seq + 1
    expected, prev = start, GENESIS_HASH if since is None else since.hash
    authority = Authority() if since is None else since.authority
    walk = _Walk(authority, start)
    for batch in batches:
        for row in batch:
            seq, prev_hash, digest = row[0], row[7], row[8]
            if seq != expected or prev_hash != prev:
                problem = _link_problem(seq, expected, prev_hash, prev)
                return walk.broken(expected, prev, *problem)
            if not stored_hash_holds(row):
                reason = "stored hash does not match the event's contents (altered after writing)"
                return walk.broken(expected, prev, seq, reason)
            claim = Claim(seq, row[2], row[3], row[4], row[6], digest, row[9], *row[13:15])
            problem_text = authority.admit(claim)
            if problem_text is not None:
                return walk.broken(expected, prev, seq, problem_text)
            expected, prev = seq + 1, digest
    if expected == 1:  # not one event: a ledger always has its first (`tracker init`)
        return VerifyReport(False, 0, 0, prev, 1, EMPTY)
    return walk.report(True, expected, prev)


@dataclass
class _Walk:
    """A walk's verdict, counting only the events it walked (signed and unsigned alike)."""

    authority: Authority
    start: int

    def __post_init__(self) -> None:
        self.signed, self.unsigned = self.authority.signed, self.authority.unsigned

    def report(
        self, ok: bool, expected: int, prev: str, seq: int | None = None, reason: str | None = None
    ) -> VerifyReport:
        return VerifyReport(
            ok,
            expected - self.start,
            expected - 1,
            prev,
            seq,
            reason,
            self.authority.signed - self.signed,
            self.authority.unsigned - self.unsigned,
            self.authority.signing_since,
            self.start,
        )

    def broken(self, expected: int, prev: str, seq: int, reason: str) -> VerifyReport:
        return self.report(False, expected, prev, seq, reason)


def stored_hash_holds(row: LedgerTuple) -> bool:
    """Whether one stored event's hash is the hash of its stored fields (by its format)."""
    seq, at, operator, action, object_ref, parent_ref, payload, prev_hash, digest, fmt = row[:10]
    origin = Origin(row[10], row[11], row[12])
    try:
        found = event_hash(
            fmt, seq, at, operator, origin, action, object_ref, parent_ref, prev_hash, payload
        )
    except ValueError:
        return False
    return found == digest


def replay_authority(rows: Iterable[LedgerTuple]) -> Authority:
    """Who may sign now, from the authority events alone (in order; others are skipped).

    What a unit of work relies on: each event is admitted only when its stored hash holds
    and :meth:`Authority.admit` accepts it, so an event inserted by hand with a forged or
    a technician's signature confers nothing (``ledger verify`` names it).
    """
    authority = Authority()
    for row in rows:
        if row[3] not in AUTHORITY_ACTIONS or not stored_hash_holds(row):
            continue
        authority.admit(Claim(row[0], row[2], row[3], row[4], row[6], row[8], row[9], *row[13:15]))
    return authority


def _link_problem(seq: int, expected_seq: int, prev_hash: str, prev: str) -> tuple[int, str]:
    if expected_seq == 1 and seq > 1:
        return 1, f"the ledger has no first event (the lowest stored event is #{seq})"
    if seq > expected_seq:
        return expected_seq, f"event {expected_seq} is missing (next stored event is {seq})"
    if seq < expected_seq:
        return seq, f"sequence goes backwards or repeats ({seq} after {expected_seq - 1})"
    return seq, "previous-hash link does not match the hash of the event before it"
