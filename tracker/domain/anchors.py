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

Format "tracker-anchor/2" (every anchor written since signing began) adds ``signed_by``
(a manager's operator code), ``key_id`` and ``signature``: the Ed25519 signature of the
UTF-8 bytes of these lines joined by a line feed, no trailing line feed::

    tracker-anchor/2
    <seq>
    <hash>
    <first_hash>
    <taken_at>
    <label>          empty when there is none
    <signed_by>
    <key_id>

Whoever rewrites a ledger can compute a matching unsigned anchor for it; a signed anchor
needs a manager's private key, and ``ledger verify --anchor`` checks that key against the
ledger (:func:`tracker.services.ledger.chain.verify_against`).
"""

from __future__ import annotations

import json
import re
from dataclasses import dataclass, replace
from datetime import datetime

from tracker.domain.authority import FORMAT_1, Authority
from tracker.domain.signing import Signer, verify
from tracker.domain.timeutil import iso_utc

ANCHOR_FORMAT = "tracker-anchor/1"
SIGNED_FORMAT = "tracker-anchor/2"
_KEY_ID = re.compile(r"^[0-9a-f]{16}$")
_SIGNATURE = re.compile(r"^[0-9a-f]{128}$")
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
    signed_by: str | None = None  # format 2: the manager who signed it, their key, signature
    key_id: str | None = None
    signature: str | None = None

    @property
    def format(self) -> str:
        return SIGNED_FORMAT if self.signature is not None else ANCHOR_FORMAT

    def signed_bytes(self, signed_by: str, key_id: str) -> bytes:
        """What a manager's key signs (see the module docstring)."""
        fields = (
            SIGNED_FORMAT,
            str(self.seq),
            self.hash,
            self.first_hash,
            self.taken_at,
            self.label or "",
            signed_by,
            key_id,
        )
        if any("\n" in field for field in fields):
            raise ValueError("an anchor field holds a line feed")
        return "\n".join(fields).encode("utf-8")

    def signed(self, signer: Signer, signed_by: str) -> Anchor:
        """This anchor signed by ``signer``, the key of the manager ``signed_by``."""
        signature = signer.sign(self.signed_bytes(signed_by, signer.key_id))
        return replace(self, signed_by=signed_by, key_id=signer.key_id, signature=signature)

    def to_text(self) -> str:
        record: dict[str, object] = {
            "format": self.format,
            "seq": self.seq,
            "hash": self.hash,
            "first_hash": self.first_hash,
            "taken_at": self.taken_at,
        }
        if self.label is not None:
            record["label"] = self.label
        if self.signature is not None:
            record |= {"signed_by": self.signed_by, "key_id": self.key_id}
            record["signature"] = self.signature
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
    if not isinstance(record, dict) or record.get("format") not in (ANCHOR_FORMAT, SIGNED_FORMAT):
        raise AnchorError(f"is not a {ANCHOR_FORMAT} or {SIGNED_FORMAT} file")
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
    anchor = Anchor(
        seq, record["hash"], record["first_hash"], taken, label if isinstance(label, str) else None
    )
    if record["format"] == ANCHOR_FORMAT:
        return anchor
    signed_by, key, signature = (record.get(k) for k in ("signed_by", "key_id", "signature"))
    if not isinstance(signed_by, str) or not signed_by:
        raise AnchorError("signed_by is missing")
    if not isinstance(key, str) or not _KEY_ID.match(key):
        raise AnchorError(f"key_id {str(key)[:20]!r} is not a key ID (16 hex digits)")
    if not isinstance(signature, str) or not _SIGNATURE.match(signature):
        raise AnchorError("signature is not an Ed25519 signature (128 hex digits)")
    return replace(anchor, signed_by=signed_by, key_id=key, signature=signature)


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


def signature_problem(anchor: Anchor, authority: Authority, anchored_format: str) -> str | None:
    """Why an anchor's signature does not vouch for it, or None when it does.

    ``authority`` is the ledger's as of the anchored event; ``anchored_format`` that event's
    format. An unsigned anchor passes only for an event recorded before signing began (it
    was written before anchors were signed); a signed one needs a manager's key that the
    ledger had registered, and not revoked, by the anchored event.
    """
    if anchor.signature is None:
        if anchored_format == FORMAT_1:
            return None
        return (
            f"the anchor is unsigned ({ANCHOR_FORMAT}) but event #{anchor.seq} is signed: "
            "anyone can write such an anchor, so it proves nothing here"
        )
    assert anchor.key_id is not None and anchor.signed_by is not None
    record = authority.keys.get(anchor.key_id)
    if record is None:
        return (
            f"the anchor is signed with key {anchor.key_id}, which this ledger had not "
            f"registered by event #{anchor.seq}"
        )
    if record.operator != anchor.signed_by:
        return f"key {anchor.key_id} is {record.operator}'s, not {anchor.signed_by}'s"
    if record.revoked_seq is not None:
        return (
            f"the anchor is signed with key {anchor.key_id}, revoked at event #{record.revoked_seq}"
        )
    if not authority.is_manager(anchor.signed_by):
        role = authority.role(anchor.signed_by) or "stranger to this ledger"
        return f"the anchor is signed by {anchor.signed_by}, a {role}: anchors need a manager's key"
    data = anchor.signed_bytes(anchor.signed_by, anchor.key_id)
    if not verify(record.public, anchor.signature, data):
        return "the anchor's signature does not match its contents (altered, or forged)"
    return None
