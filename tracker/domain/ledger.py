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
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from tracker.domain.timeutil import iso_utc

FORMAT = "tracker-ledger/1"
GENESIS_HASH = "0" * 64
# An empty ledger proves nothing: every database opens its ledger with a first event, so a
# ledger without one has lost it (or never was one) and is not intact.
EMPTY = "the ledger holds no events, not even the first one `tracker init` records"


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


def canonical_bytes(
    seq: int,
    at: str,
    operator: str,
    action: str,
    object_ref: str,
    parent_ref: str,
    prev_hash: str,
    payload: str,
) -> bytes:
    """The exact bytes that are hashed; ``at`` is already in the ledger's ISO form."""
    fields = (FORMAT, str(seq), at, operator, action, object_ref, parent_ref, prev_hash, payload)
    for value in fields:
        if "\n" in value:
            raise ValueError(f"ledger field contains a line feed: {value[:40]!r}")
    return "\n".join(fields).encode("utf-8")


def event_hash(
    seq: int,
    at: datetime | str,
    operator: str,
    action: str,
    object_ref: str,
    parent_ref: str,
    prev_hash: str,
    payload: str,
) -> str:
    stamp = at if isinstance(at, str) else iso_utc(at)
    data = canonical_bytes(seq, stamp, operator, action, object_ref, parent_ref, prev_hash, payload)
    return hashlib.sha256(data).hexdigest()


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


@dataclass(frozen=True)
class VerifyReport:
    ok: bool
    events: int
    head_seq: int
    head_hash: str
    broken_seq: int | None = None
    reason: str | None = None


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
        )
        for r in rows
    )


# The stored columns of one event as a plain tuple, in LedgerRow's order: the service streams
# these straight from the driver (a million events: no object per row).
LedgerTuple = tuple[int, "datetime | str", str, str, str, str, str, str, str]


def ledger_stamp(at: datetime | str) -> str:
    """An event's time in the ledger's ISO form, from a datetime, ISO text or SQLite's stored
    text (see :func:`verify_batches`, which inlines the same steps)."""
    if not isinstance(at, str):
        return iso_utc(at)
    if len(at) == 26 and at[10] == " ":
        return f"{at[:10]}T{at[11:]}Z"
    return at


def verify_tuples(rows: Iterable[LedgerTuple]) -> VerifyReport:
    """Walk events in ``seq`` order; stop at the first broken link and say why."""
    return verify_batches((rows,))


def verify_batches(batches: Iterable[Iterable[LedgerTuple]]) -> VerifyReport:
    """Walk events in ``seq`` order, batch after batch; stop at the first broken link.

    Checks, in order, for each event: the sequence continues without a gap, its
    ``prev_hash`` is the previous event's hash, and its stored hash matches its
    recomputed hash. Streaming: memory does not grow with the ledger. The hashing is
    inlined and the batches walked in this frame (this loop runs once per event of a
    decade's ledger); it computes exactly :func:`event_hash`, and a field holding a line
    feed counts as altered. Events accepted so far are always 1..expected - 1. A ledger
    with no event 1 — empty, or starting later — is not intact.

    ``at`` is a datetime, the ledger's ISO text, or the text SQLite stores
    (``2026-03-04 09:15:00.000000``: SQLAlchemy's format, always with microseconds, UTC),
    which differs from the ISO form only by its "T" and "Z". Text of any other shape is
    hashed as it stands, so it fails: tracker never writes it.
    """
    expected, prev = 1, GENESIS_HASH
    sha256, head = hashlib.sha256, FORMAT
    for batch in batches:
        for seq, at, operator, action, object_ref, parent_ref, payload, prev_hash, digest in batch:
            if seq != expected or prev_hash != prev:
                problem = _link_problem(seq, expected, prev_hash, prev)
                return VerifyReport(False, expected - 1, expected - 1, prev, *problem)
            if not isinstance(at, str):
                stamp = iso_utc(at)
            elif len(at) == 26 and at[10] == " ":  # SQLite's stored text (see above)
                stamp = f"{at[:10]}T{at[11:]}Z"
            else:
                stamp = at
            text = "\n".join(
                (
                    head,
                    str(seq),
                    stamp,
                    operator,
                    action,
                    object_ref,
                    parent_ref,
                    prev_hash,
                    payload,
                )
            )
            if sha256(text.encode("utf-8")).hexdigest() != digest or text.count("\n") != 8:
                reason = "stored hash does not match the event's contents (altered after writing)"
                return VerifyReport(False, expected - 1, expected - 1, prev, seq, reason)
            expected, prev = seq + 1, digest
    if expected == 1:  # not one event: a ledger always has its first (`tracker init`)
        return VerifyReport(False, 0, 0, prev, 1, EMPTY)
    return VerifyReport(True, expected - 1, expected - 1, prev)


def _link_problem(seq: int, expected_seq: int, prev_hash: str, prev: str) -> tuple[int, str]:
    if expected_seq == 1 and seq > 1:
        return 1, f"the ledger has no first event (the lowest stored event is #{seq})"
    if seq > expected_seq:
        return expected_seq, f"event {expected_seq} is missing (next stored event is {seq})"
    if seq < expected_seq:
        return seq, f"sequence goes backwards or repeats ({seq} after {expected_seq - 1})"
    return seq, "previous-hash link does not match the hash of the event before it"
