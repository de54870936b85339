"""Anchors: the ledger's head written down outside the database, to catch a rollback.

The hash chain proves that no event was altered, inserted or removed *before* the
newest one — but someone who deletes the newest events (or restores an old copy of
the file) leaves a shorter chain that is still perfectly valid. An anchor is the
head at one moment (sequence number and hash, plus the first event's hash, which
names the ledger) kept somewhere else: in a return report, sent to the lender, on
a colleague's disk. Later the chain must still contain that exact event.

Format "tracker-anchor/1": one JSON object with the fields ``format``, ``seq``,
``hash``, ``first_hash`` and ``taken_at`` (ISO 8601 UTC), and optionally ``label``,
free text saying what the anchor was taken for (e.g. a return report).
"""

from __future__ import annotations

import json
import re
from dataclasses import dataclass
from datetime import datetime

from tracker.domain.timeutil import iso_utc

ANCHOR_FORMAT = "tracker-anchor/1"
_HEX64 = re.compile(r"^[0-9a-f]{64}$")
# An anchor is a few hundred bytes; anything much larger is not one.
MAX_ANCHOR_BYTES = 4096


class AnchorError(ValueError):
    """The text is not a tracker anchor; the message says which field is wrong."""


@dataclass(frozen=True)
class Anchor:
    seq: int
    hash: str
    first_hash: str
    taken_at: str  # ISO 8601 UTC, as written
    label: str | None = None

    def to_text(self) -> str:
        record: dict[str, object] = {
            "format": ANCHOR_FORMAT,
            "seq": self.seq,
            "hash": self.hash,
            "first_hash": self.first_hash,
            "taken_at": self.taken_at,
        }
        if self.label is not None:
            record["label"] = self.label
        return json.dumps(record, indent=2, ensure_ascii=False) + "\n"


def make_anchor(
    seq: int, head_hash: str, first_hash: str, taken_at: datetime, label: str | None = None
) -> Anchor:
    return Anchor(seq, head_hash, first_hash, iso_utc(taken_at), label)


def parse_anchor(text: str) -> Anchor:
    """Read an anchor written by :meth:`Anchor.to_text`; refuse anything else."""
    try:
        record = json.loads(text)
    except (json.JSONDecodeError, RecursionError) as exc:
        raise AnchorError(f"is not JSON ({exc})") from None
    if not isinstance(record, dict) or record.get("format") != ANCHOR_FORMAT:
        raise AnchorError(f"is not a {ANCHOR_FORMAT} file")
    seq = record.get("seq")
    if not isinstance(seq, int) or isinstance(seq, bool) or seq < 1:
        raise AnchorError(f"seq {seq!r} is not an event number")
    for name in ("hash", "first_hash"):
        value = record.get(name)
        if not isinstance(value, str) or not _HEX64.match(value):
            raise AnchorError(f"{name} {str(value)[:20]!r} is not a hex SHA-256")
    taken = record.get("taken_at")
    if not isinstance(taken, str):
        raise AnchorError("taken_at is missing")
    label = record.get("label")
    return Anchor(
        seq, record["hash"], record["first_hash"], taken, label if isinstance(label, str) else None
    )


@dataclass(frozen=True)
class AnchorCheck:
    """Whether a ledger still holds the anchored event, and if not, what happened."""

    ok: bool
    anchor_seq: int
    anchor_hash: str
    problem: str | None = None


def check_anchor(
    anchor: Anchor, first_hash: str | None, head_seq: int, hash_at_anchor: str | None
) -> AnchorCheck:
    """Compare an anchor with the ledger's first hash, its head and its event at ``anchor.seq``.

    ``hash_at_anchor`` is the stored hash of the ledger's event numbered ``anchor.seq``
    (None when there is no such event).
    """

    def failed(problem: str) -> AnchorCheck:
        return AnchorCheck(False, anchor.seq, anchor.hash, problem)

    if first_hash is not None and first_hash != anchor.first_hash:
        return failed("the anchor belongs to another ledger (its first event differs)")
    if hash_at_anchor is None:
        missing = anchor.seq - head_seq
        return failed(
            f"the ledger ends at event #{head_seq} but the anchor taken at {anchor.taken_at} "
            f"saw #{anchor.seq}: {missing} newest event(s) are gone (deleted or rolled back)"
        )
    if hash_at_anchor != anchor.hash:
        return failed(
            f"event #{anchor.seq} is not the event the anchor saw at {anchor.taken_at}: "
            "the ledger was rewritten at or before it"
        )
    return AnchorCheck(True, anchor.seq, anchor.hash)
