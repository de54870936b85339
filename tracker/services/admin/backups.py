"""Backups of a SQLite database, and putting one back only after its ledger checks out.

A backup is a consistent copy made with SQLite's online backup API while others may
be writing; the copy's own ledger is verified and its head reported, so the person
taking it can keep that head as an anchor. A restore refuses a backup whose ledger
is broken, that fails a given anchor, or that would silently lose newer events; it
keeps the file it replaces beside it and records itself in the restored ledger.
PostgreSQL databases are backed up with pg_dump and restored with pg_restore (README).
"""

from __future__ import annotations

import hashlib
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

from sqlalchemy import select

from tracker.db import migrate, outputs
from tracker.db.database import Database, open_database
from tracker.db.engine import resolve_url, sqlite_path
from tracker.db.keyring import PROCESS, Keyring
from tracker.db.sqlite_files import (
    copy_live,
    fold_log,
    keep_aside,
    looks_like_sqlite,
    put_back,
    read_only,
    schema_revision,
)
from tracker.domain.anchors import Anchor
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.ledger import VerifyReport
from tracker.domain.models import CustodyEvent, Operator
from tracker.domain.timeutil import Clock, utcnow
from tracker.services.core import authority as signing
from tracker.services.core.common import finish
from tracker.services.core.uow import unit_of_work
from tracker.services.core.views import Done, View
from tracker.services.ledger import chain

PG_HINT = "for PostgreSQL use pg_dump and pg_restore (docs/backups.md)"


class BackupView(View):
    path: str
    size_bytes: int
    sha256: str
    revision: str | None
    events: int
    head_seq: int
    head_hash: str
    ledger_ok: bool
    problem: str | None


def _file_path(url: str, action: str) -> Path:
    path = sqlite_path(url)
    if path is None:
        raise InputError("database", url, f"{action} works on SQLite files; {PG_HINT}")
    return path


def _sha256(path: Path) -> str:
    digest = hashlib.sha256()
    with path.open("rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def _verify_file(path: Path) -> VerifyReport:
    db = read_only(path)
    try:
        return chain.verify(db)
    finally:
        db.close()


def backup(db: Database, destination: Path) -> BackupView:
    """Copy the open database to a new file (never over an existing one) and check the copy.

    The copy is built under a hidden name beside the destination and published only when
    whole (:mod:`tracker.db.outputs`), so a crash never leaves half a backup under its name.
    """
    source = _file_path(db.url, "backup")
    outputs.check_target(destination, "backup file", database=source, forceable=False)
    building = outputs.temp_path(destination.parent, destination.name)
    try:
        copy_live(source, building)
        view = _checked_copy(building, destination)
        fold_log(building)  # reading may leave an empty log beside it: the file alone is whole
        outputs.publish(building, destination, "backup file", database=source, forceable=False)
    finally:
        outputs.discard(*(Path(f"{building}{suffix}") for suffix in ("", *outputs.SIDE_SUFFIXES)))
    return view


def _checked_copy(copy: Path, destination: Path) -> BackupView:
    """What a copy holds (its ledger verified), read before it gets its name."""
    report = _verify_file(copy)
    return BackupView(
        path=str(destination),
        size_bytes=copy.stat().st_size,
        sha256=_sha256(copy),
        revision=schema_revision(copy),
        events=report.events,
        head_seq=report.head_seq,
        head_hash=report.head_hash,
        ledger_ok=report.ok,
        problem=None if report.ok else f"event #{report.broken_seq}: {report.reason}",
    )


class RestoreView(View):
    database: str
    restored_from: str
    backup_sha256: str
    backup_head_seq: int
    backup_head_hash: str
    replaced_kept_as: str | None
    events_lost: int


@dataclass(frozen=True)
class _Current:
    """What the file about to be replaced holds, as far as it can be read."""

    readable: bool
    head_seq: int = 0
    head_hash: str | None = None
    shared: int = 0  # leading events identical in both ledgers


def restore(
    target: str,
    actor: str | None,
    source: Path,
    *,
    accept_loss: bool = False,
    anchor: Anchor | None = None,
    clock: Clock = utcnow,
    keyring: Keyring | None = None,
) -> Done[RestoreView]:
    """Replace the database with a backup whose ledger verifies; keep what it replaces.

    The restore is recorded in the restored ledger, signed by ``actor``'s key as that
    ledger knows it (unlocked in ``keyring``, by default this process's); one that drops
    newer events needs a manager. Both are checked before anything is replaced."""
    path = _file_path(resolve_url(target), "restore")
    report = _check_backup(source, path, actor, anchor)
    current = _current(path, source) if path.exists() else None
    lost = _events_lost(current, report, accept_loss)
    _require_signer(source, actor, lost, keyring or PROCESS)  # before a byte is touched
    aside = outputs.replaced_name(path, clock()) if current is not None else None
    if aside is not None:
        keep_aside(path, aside)
    put_back(source, path)
    db = open_database(path, clock=clock)
    if keyring is not None:
        db.keyring = keyring
    try:
        with unit_of_work(db, actor) as uow:
            view = RestoreView(
                database=str(path),
                restored_from=str(source),
                backup_sha256=_sha256(source),
                backup_head_seq=report.head_seq,
                backup_head_hash=report.head_hash,
                replaced_kept_as=str(aside) if aside else None,
                events_lost=lost,
            )
            payload = view.model_dump(exclude={"database"})
            payload["replaced_head"] = (
                {"seq": current.head_seq, "hash": current.head_hash} if current else None
            )
            return finish(uow, "database.restored", "", payload, lambda: view)
    finally:
        db.close()


def _check_backup(
    source: Path, target: Path, actor: str | None, anchor: Anchor | None
) -> VerifyReport:
    """Everything that must hold before a byte of the database is touched."""
    if not looks_like_sqlite(source):
        raise InputError("backup file", str(source), "is not an SQLite database file")
    if target.exists() and source.resolve() == target.resolve():
        raise InputError("backup file", str(source), "is the database itself")
    revision = schema_revision(source)
    if revision is None or not migrate.is_known(revision):
        why = "is not a tracker database" if revision is None else "was made by a newer tracker"
        raise InputError("backup file", str(source), why)
    backup_db = read_only(source)
    try:
        report = chain.verify(backup_db)
        if not report.ok:
            raise RuleViolation(
                "backup file",
                str(source),
                f"its ledger is broken at event #{report.broken_seq} ({report.reason}); "
                "nothing was replaced",
            )
        if anchor is not None:
            check = chain.verify_against(backup_db, anchor).anchor
            if not check.ok:
                raise RuleViolation(
                    "anchor file", anchor.hash[:12], f"{check.problem}; not restored"
                )
        _require_operator(backup_db, actor)
    finally:
        backup_db.close()
    return report


def _require_operator(backup_db: Database, actor: str | None) -> None:
    """The restore is recorded in the restored ledger, so its operator must exist there."""
    if not actor:
        raise InputError("operator", None, "no operator given; a restore is recorded in the ledger")
    with backup_db.read_session() as session:
        found = session.scalar(select(Operator.active).where(Operator.code == actor))
    if not found:
        raise InputError("operator", actor, "is not an active operator in the backup")


def open_backup(source: Path) -> Database:
    """A backup opened read-only (to unlock the key its ledger knows, before a restore)."""
    if not looks_like_sqlite(source):
        raise InputError("backup file", str(source), "is not an SQLite database file")
    return read_only(source)


def _require_signer(source: Path, actor: str | None, lost: int, keyring: Keyring) -> None:
    """The restore's event will be signed in the backup's ledger: ``actor`` needs a key that
    ledger lets them sign with, unlocked, and a manager's role to drop events."""
    backup_db = read_only(source)
    try:
        authority = signing.read(backup_db)
    finally:
        backup_db.close()
    assert actor is not None  # _check_backup asked for one
    if not authority.keys:
        raise RuleViolation(
            "backup file",
            str(source),
            "was kept before signing began, so its ledger cannot record the restore; "
            "copy the file back by hand (after a backup of the database) and register a key",
        )
    signing.signer_for(authority, actor, keyring)
    if lost and not authority.is_manager(actor):
        role = authority.role(actor) or "stranger to this ledger"
        raise RuleViolation(
            "operator",
            actor,
            f"a restore that loses {lost} event(s) needs an operator with the manager role "
            f"({actor} is a {role}); ask a manager ({', '.join(authority.managers())}) to do it",
        )


def _hashes(db: Database) -> Iterator[str]:
    with db.engine.connect() as connection:
        query = select(CustodyEvent.hash).order_by(CustodyEvent.seq)
        yield from connection.execution_options(yield_per=5000).scalars(query)


def _current(path: Path, source: Path) -> _Current:
    """The replaced ledger's head and how many of its first events the backup shares."""
    if not looks_like_sqlite(path):
        return _Current(readable=False)
    try:
        db, backup_db = read_only(path), read_only(source)
        try:
            report = chain.verify(db)
            shared = 0
            for ours, theirs in zip(_hashes(db), _hashes(backup_db), strict=False):
                if ours != theirs:
                    break
                shared += 1
        finally:
            db.close()
            backup_db.close()
    except Exception:  # a damaged file: that is what restores are for
        return _Current(readable=False)
    return _Current(True, report.head_seq, report.head_hash, shared)


def _events_lost(current: _Current | None, backup: VerifyReport, accept_loss: bool) -> int:
    """How many events of the current ledger the restore drops; refuse unless accepted."""
    if current is None or not current.readable:
        return 0
    lost = current.head_seq - current.shared
    if lost and not accept_loss:
        what = (
            f"holds {lost} event(s) newer than the backup's head #{backup.head_seq}"
            if current.shared == backup.head_seq
            else f"parts from the backup's history after event #{current.shared} "
            f"({lost} of its events are not in the backup)"
        )
        raise RuleViolation(
            "accept-loss",
            None,
            f"the database {what}; restoring loses them, so it restores only when the loss "
            "is accepted (the replaced file is kept beside it)",
        )
    return lost
