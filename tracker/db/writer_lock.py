"""Taking the writer lock, and telling a writer that waited in vain who holds it.

A unit of work takes the lab-wide writer lock (``tracker.db.engine``: ``BEGIN
IMMEDIATE`` on SQLite, an advisory lock on PostgreSQL). When another writer keeps it
past the wait (30 s, or ``TRACKER_BUSY_WAIT`` seconds) the waiting one leaves with
:class:`~tracker.domain.errors.Busy` — one line naming the holder and since when —
instead of the driver's "database is locked". This module is the one place where that
driver error is recognised and converted.

Who holds the lock:

- PostgreSQL knows. Each writer names itself (``application_name``, set inside its
  transaction, e.g. ``tracker: tech running "import lender manifest"``) and the waiter
  reads the holder of the advisory lock from ``pg_locks`` and ``pg_stat_activity``;
  "since" is the holder's ``xact_start``.
- SQLite has no such API, so the writer that holds the lock leaves a small note beside
  the database (``<file>.writer``: operator, action, process, host, since) and removes
  it just before it commits or rolls back. A waiter reads the note only when its wait
  has ended. A note whose process is gone (a writer killed while it held the lock, its
  lock long released) is said to be stale; no note means something else holds the
  lock (a schema upgrade, another program, or a writer finishing just then).
"""

from __future__ import annotations

import contextlib
import json
import os
import socket
from collections.abc import Iterator
from dataclasses import asdict, dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from sqlalchemy import Engine, text
from sqlalchemy.exc import DBAPIError
from sqlalchemy.orm import Session

from tracker.db.engine import HOLDER_OPTION, PG_WRITER_LOCK, sqlite_path
from tracker.domain.errors import Busy

NOTE_SUFFIX = ".writer"
APPLICATION_PREFIX = "tracker: "
# PostgreSQL keeps the first 63 bytes of an application_name (NAMEDATALEN - 1).
APPLICATION_NAME_BYTES = 63
# SQLSTATE 55P03 lock_not_available: lock_timeout ran out (PostgreSQL documentation,
# Appendix A "Error Codes"; from memory, and seen in this module's tests).
PG_LOCK_NOT_AVAILABLE = "55P03"
# sqlite3's messages for SQLITE_BUSY and SQLITE_LOCKED (from memory of the C API's texts).
SQLITE_BUSY_TEXTS = ("database is locked", "database is busy", "database table is locked")


@dataclass(frozen=True)
class Holder:
    """A writer as others are told about it."""

    operator: str
    doing: str
    pid: int
    host: str
    since: datetime

    @classmethod
    def this_process(cls, operator: str, doing: str) -> Holder:
        return cls(operator, doing, os.getpid(), socket.gethostname(), datetime.now(UTC))

    def describe(self) -> str:
        return f'{self.operator} running "{self.doing}" (process {self.pid} on {self.host})'


def application_name(operator: str, doing: str) -> str:
    """The name PostgreSQL shows for a writer's connection (printable ASCII only)."""
    name = f'{APPLICATION_PREFIX}{operator} running "{doing}"'
    return name.encode("ascii", "replace").decode("ascii")[:APPLICATION_NAME_BYTES]


class WriterLock:
    """One unit of work's hold on the writer lock: taken, announced, and let go."""

    def __init__(self, engine: Engine, operator: str, doing: str) -> None:
        self.engine, self.operator, self.doing = engine, operator, doing
        self.database = sqlite_path(engine.url.render_as_string(hide_password=False))
        self.note: Path | None = None

    def take(self, session: Session) -> None:
        """Wait for the lock inside ``session``'s transaction; Busy if the wait ends first."""
        name = application_name(self.operator, self.doing)
        with busy_as_refusal(self.engine):
            session.connection(execution_options={HOLDER_OPTION: name})
        if self.database is not None:
            self.note = leave_note(self.database, Holder.this_process(self.operator, self.doing))

    def release(self) -> None:
        """Called just before COMMIT or ROLLBACK: the note never outlives the lock it names."""
        if self.note is not None:
            with contextlib.suppress(OSError):
                self.note.unlink()
            self.note = None


@contextlib.contextmanager
def busy_as_refusal(engine: Engine) -> Iterator[None]:
    """The driver's "lock not free in time" becomes Busy naming the holder; nothing else."""
    try:
        yield
    except DBAPIError as error:
        if not is_busy(error):
            raise
        raise who_holds(engine) from None


def is_busy(error: DBAPIError) -> bool:
    """Whether a driver error says the writer lock (or the file's lock) was not free in time."""
    if getattr(error.orig, "sqlstate", None) == PG_LOCK_NOT_AVAILABLE:
        return True
    return type(error.orig).__module__ == "sqlite3" and any(
        part in str(error.orig).lower() for part in SQLITE_BUSY_TEXTS
    )


def who_holds(engine: Engine) -> Busy:
    """What holds the writer lock now, as the refusal the waiting writer leaves with."""
    database = sqlite_path(engine.url.render_as_string(hide_password=False))
    if database is not None:
        return _sqlite_holder(database)
    return _postgresql_holder(engine)


# ---------------------------------------------------------------- SQLite: the note


def note_path(database: Path) -> Path:
    return database.with_name(database.name + NOTE_SUFFIX)


def leave_note(database: Path, holder: Holder) -> Path | None:
    """Write the holder's note beside the database (whole, then renamed into place).

    Best effort: a folder this process may not write in only costs waiters the name.
    The note is as private as the database file itself. Plain system calls: every
    write on SQLite pays for the note, so it costs tens of microseconds, not hundreds.
    """
    path = note_path(database)
    staged = path.with_name(f"{path.name}.{holder.pid}")
    record = {**asdict(holder), "since": holder.since.isoformat()}
    try:
        try:
            mode = database.stat().st_mode & 0o666
        except FileNotFoundError:
            mode = 0o600
        fd = os.open(staged, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, mode)
        try:
            os.write(fd, json.dumps(record).encode("utf-8"))
        finally:
            os.close(fd)
        staged.replace(path)
    except OSError:
        with contextlib.suppress(OSError):
            staged.unlink()
        return None
    return path


def read_note(database: Path) -> Holder | None:
    """The note beside the database, or None when there is none (or it cannot be read)."""
    try:
        record: dict[str, Any] = json.loads(note_path(database).read_text(encoding="utf-8"))
        return Holder(
            operator=str(record["operator"]),
            doing=str(record["doing"]),
            pid=int(record["pid"]),
            host=str(record["host"]),
            since=datetime.fromisoformat(str(record["since"])),
        )
    except (OSError, ValueError, KeyError, TypeError):
        return None


def process_gone(holder: Holder) -> bool:
    """True when the holder ran on this machine and its process no longer exists.

    (A process on another machine cannot be asked; it is taken to be alive.)
    """
    if holder.host != socket.gethostname():
        return False
    try:
        os.kill(holder.pid, 0)
    except ProcessLookupError:
        return True
    except PermissionError:
        return False  # it exists, under another user
    return False


def _sqlite_holder(database: Path) -> Busy:
    holder = read_note(database)
    unnamed = "another program, a schema upgrade or a writer just finishing holds it"
    if holder is None:
        return Busy(f"{unnamed} (no tracker writer left a note)", None)
    if process_gone(holder):
        return Busy(
            f"{unnamed}; the note left by {holder.describe()} is stale: that process has ended",
            None,
        )
    return Busy(holder.describe(), holder.since)


# ---------------------------------------------------------------- PostgreSQL: pg_locks

# The bigint key of pg_advisory_xact_lock is kept as classid (high 32 bits), objid (low
# 32 bits) and objsubid 1 (PostgreSQL documentation, "pg_locks"; from memory, and the
# tests find the holder this way).
_PG_HOLDER = text(
    """
    SELECT a.pid, a.application_name, a.usename, host(a.client_addr) AS client,
           a.xact_start
    FROM pg_locks AS l JOIN pg_stat_activity AS a ON a.pid = l.pid
    WHERE l.locktype = 'advisory' AND l.granted AND l.objsubid = 1
      AND l.classid::bigint = :high AND l.objid::bigint = :low
      AND l.database = (SELECT oid FROM pg_database WHERE datname = current_database())
    """
)


def _postgresql_holder(engine: Engine) -> Busy:
    key = {"high": PG_WRITER_LOCK >> 32, "low": PG_WRITER_LOCK & 0xFFFFFFFF}
    try:
        with engine.connect() as connection:
            row = connection.execute(_PG_HOLDER, key).first()
    except DBAPIError:
        row = None  # the server went away meanwhile: say what can be said
    if row is None:
        return Busy("a writer that has just finished held it (the lock is free again)", None)
    if row.xact_start is None:  # another login's times need pg_read_all_stats to be seen
        return Busy(f"{_pg_describe(row)}, since a time this login may not see", None)
    return Busy(_pg_describe(row), row.xact_start)


def _pg_describe(row: Any) -> str:
    name = row.application_name or ""
    where = f"server process {row.pid}" + (f", from {row.client}" if row.client else "")
    if name.startswith(APPLICATION_PREFIX):
        return f"{name.removeprefix(APPLICATION_PREFIX)} ({where})"
    user = row.usename or "a login this one may not see"
    return f"another client ({name or 'unnamed'}, database user {user}, {where})"
