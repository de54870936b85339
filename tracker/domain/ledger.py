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
from collections.abc import Iterable
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from tracker.domain.timeutil import iso_utc

FORMAT = "tracker-ledger/1"
GENESIS_HASH = "0" * 64


def canonical_json(payload: Any) -> str:
    """JSON with sorted keys and no insignificant white space; NaN and Infinity refused."""
    return json.dumps(
        payload, sort_keys=True, separators=(",", ":"), ensure_ascii=False, allow_nan=False
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
    """Walk events in ``seq`` order; stop at the first broken link and say why.

    Checks, in order, for each event: the sequence continues without a gap, its
    ``prev_hash`` is the previous event's hash, and its stored hash matches its
    recomputed hash. Streaming: memory does not grow with the ledger.
    """
    expected_seq, prev = 1, GENESIS_HASH
    count = 0
    for row in rows:
        problem = _first_problem(row, expected_seq, prev)
        if problem is not None:
            return VerifyReport(False, count, expected_seq - 1, prev, problem[0], problem[1])
        count += 1
        expected_seq, prev = row.seq + 1, row.hash
    return VerifyReport(True, count, expected_seq - 1, prev)


def _first_problem(row: LedgerRow, expected_seq: int, prev: str) -> tuple[int, str] | None:
    if row.seq != expected_seq:
        if row.seq > expected_seq:
            return expected_seq, f"event {expected_seq} is missing (next stored event is {row.seq})"
        return row.seq, f"sequence goes backwards or repeats ({row.seq} after {expected_seq - 1})"
    if row.prev_hash != prev:
        return row.seq, "previous-hash link does not match the hash of the event before it"
    recomputed = event_hash(
        row.seq,
        row.at,
        row.operator,
        row.action,
        row.object_ref,
        row.parent_ref,
        row.prev_hash,
        row.payload,
    )
    if recomputed != row.hash:
        return row.seq, "stored hash does not match the event's contents (altered after writing)"
    return None
