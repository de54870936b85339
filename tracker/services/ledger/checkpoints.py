"""What this computer verified of each ledger, kept outside the database: checkpoints.

A full verification walks every event from the first; a lab's decade is a million of them.
A return report of one loan must not pay for the lab's whole history each time, so each
verification that holds keeps, in a small file of this computer's state folder
(:func:`tracker.db.location.checkpoint_dir`), the event it reached and that event's hash.
The next verification of the same ledger checks that the event still has that hash and
walks only the events after it, and says so: "events 1–N verified on DATE (this computer's
checkpoint), N+1–M now".

What a checkpoint cannot see: an old event altered *without* its hash recomputed, after
the checkpoint was taken, breaks the chain before the checkpoint, where a walk from the
checkpoint does not look. A full verification (``ledger verify``) finds it, and keeps a new
checkpoint. A checkpoint the ledger no longer matches (the database replaced by another or
an older copy, or rewritten) is never trusted: the chain is then verified in full, and the
answer says why.
"""

from __future__ import annotations

import hashlib
import tempfile
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path
from typing import Literal

from pydantic import BaseModel, ValidationError
from sqlalchemy import select
from sqlalchemy.engine import make_url

from tracker.db.database import Database
from tracker.db.location import checkpoint_dir
from tracker.domain.ledger import Since, VerifyReport, verify_batches
from tracker.domain.models import CustodyEvent
from tracker.services.core import authority as signing
from tracker.services.ledger.chain import Progress, event_batches, verify

FORMAT: Literal["tracker-checkpoint/1"] = "tracker-checkpoint/1"
AuditMark = Literal["now", "kept", "dropped"]


class Checkpoint(BaseModel):
    """One ledger's last verified event, as this computer verified it."""

    format: Literal["tracker-checkpoint/1"] = FORMAT
    database: str  # where the ledger was read (a path, or a URL without its password)
    first_hash: str  # the ledger's first event: which ledger this is
    seq: int
    hash: str
    verified_at: datetime
    # the event up to which a whole-lab audit found the books agreeing with the ledger
    audited_seq: int | None = None
    audited_at: datetime | None = None


@dataclass(frozen=True)
class Verified:
    """A verification, and what it rested on: ``checkpoint`` when the events up to it were
    verified before; ``note`` when a checkpoint was found and not trusted, and why."""

    chain: VerifyReport
    checkpoint: Checkpoint | None = None
    note: str | None = None


def verify_since_checkpoint(db: Database) -> Verified:
    """Verify the events after this computer's checkpoint of the ledger, or all of them."""
    kept = kept_for(db)
    if kept is None:
        return Verified(verify_and_keep(db))
    stored = _hash_at(db, kept.seq)
    if stored != kept.hash:
        seen = "no longer holds" if stored is None else "holds another hash for"
        note = (
            f"this computer's checkpoint of {kept.verified_at:%Y-%m-%d} does not match: the "
            f"ledger {seen} event #{kept.seq} (the database was replaced by another or an "
            "older copy, or rewritten since); the chain was verified in full instead"
        )
        return Verified(verify_and_keep(db, audit="dropped"), note=note)
    since = Since(kept.seq, kept.hash, signing.upto(db, kept.seq))
    with db.engine.connect() as connection:
        chain = verify_batches(event_batches(connection, after=kept.seq), since)
    if chain.ok:
        keep(db, chain, db.clock())
    return Verified(chain, checkpoint=kept)


def verify_and_keep(
    db: Database, progress: Progress | None = None, every: int = 500, audit: AuditMark = "kept"
) -> VerifyReport:
    """A full verification (see :func:`~tracker.services.ledger.chain.verify`); when it
    holds, its head becomes this computer's checkpoint."""
    chain = verify(db, progress, every)
    if chain.ok:
        keep(db, chain, db.clock(), audit=audit)
    return chain


def keep(db: Database, chain: VerifyReport, at: datetime, *, audit: AuditMark = "kept") -> None:
    """Keep the head a verification that held reached, and the audit's mark: ``"now"``
    when an audit found the books agreeing up to this head, ``"kept"`` for an earlier
    audit's mark, ``"dropped"`` when the earlier checkpoint was not this ledger's.
    A checkpoint that cannot be written (a read-only home folder) is not kept: the next
    verification walks the whole chain."""
    first = _first_hash(db)
    if first is None or not chain.ok:
        return
    path = _file(db, first)
    earlier = _read(path)
    point = Checkpoint(
        database=_where(db),
        first_hash=first,
        seq=chain.head_seq,
        hash=chain.head_hash,
        verified_at=at,
    )
    if audit == "now":
        point.audited_seq, point.audited_at = chain.head_seq, at
    elif (
        audit == "kept"
        and earlier is not None
        and earlier.audited_seq is not None
        and earlier.audited_seq <= chain.head_seq
    ):
        point.audited_seq, point.audited_at = earlier.audited_seq, earlier.audited_at
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        with tempfile.NamedTemporaryFile("w", dir=path.parent, delete=False) as out:
            out.write(point.model_dump_json(indent=1))
        Path(out.name).replace(path)
    except OSError:
        return


def kept_for(db: Database) -> Checkpoint | None:
    """This computer's checkpoint of the ledger, if it keeps one."""
    first = _first_hash(db)
    return None if first is None else _read(_file(db, first))


def _read(path: Path) -> Checkpoint | None:
    """A checkpoint file as written; anything else (missing, spoiled) counts as none."""
    try:
        return Checkpoint.model_validate_json(path.read_bytes()[:4096])
    except (OSError, ValidationError):
        return None


def _file(db: Database, first_hash: str) -> Path:
    """One file per ledger and place: the same ledger's copies keep checkpoints apart."""
    name = hashlib.sha256(f"{first_hash}\n{_where(db)}".encode()).hexdigest()[:32]
    return checkpoint_dir() / f"{name}.json"


def _where(db: Database) -> str:
    path = db.path
    if path is not None:
        return str(path.resolve())
    return make_url(db.url).render_as_string(hide_password=True)


def _first_hash(db: Database) -> str | None:
    return _hash_at(db, 1)


def _hash_at(db: Database, seq: int) -> str | None:
    with db.read_session() as session:
        return session.scalar(select(CustodyEvent.hash).where(CustodyEvent.seq == seq))
