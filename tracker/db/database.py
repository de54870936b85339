"""The open database: engine, session factories, the clock, and safe opening/upgrading."""

from __future__ import annotations

import sqlite3
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from sqlalchemy import Engine
from sqlalchemy import exc as sa_exc
from sqlalchemy.engine import make_url
from sqlalchemy.exc import DBAPIError, OperationalError
from sqlalchemy.orm import Session, sessionmaker

from tracker.db import migrate
from tracker.db.engine import build_engine, create_private_file, resolve_url, sqlite_path, writer
from tracker.db.keyring import PROCESS, Keyring
from tracker.db.writer_lock import busy_as_refusal
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.timeutil import Clock, utcnow


@dataclass
class Database:
    """A handle on one tracker database. Build it with :func:`open_database`."""

    url: str
    engine: Engine
    clock: Clock = field(default=utcnow)
    # the unlocked keys its units of work sign with (this process's, unless replaced)
    keyring: Keyring = field(default_factory=lambda: PROCESS)
    # what services may keep between units of work on this handle (the authority read
    # from the ledger, the session user): keyed by the service that keeps it
    memo: dict[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        self._reader = sessionmaker(self.engine, expire_on_commit=False)
        self._writer = sessionmaker(writer(self.engine), expire_on_commit=False)

    @property
    def backend(self) -> str:
        return self.engine.dialect.name

    @property
    def path(self) -> Path | None:
        return sqlite_path(self.url)

    def read_session(self) -> Session:
        """A session for queries; it never takes the writer lock."""
        return self._reader()

    def write_session(self) -> Session:
        """A session whose transaction holds the writer lock (see tracker.db.engine)."""
        return self._writer()

    def close(self) -> None:
        self.engine.dispose()


def open_database(
    target: str | Path,
    *,
    create: bool = False,
    upgrade: bool = True,
    clock: Clock = utcnow,
) -> Database:
    """Open (or with ``create`` make) a database and bring its schema to this code's head.

    An older SQLite file is first copied beside itself (``<name>.bak-<revision>``)
    and then upgraded. An older PostgreSQL database is refused with the command
    to run, because other workstations may be using it.
    """
    url = resolve_url(target)
    path = sqlite_path(url)
    if path is not None and not path.exists():
        if not create:
            raise InputError("database", str(path), "no database here")
        create_private_file(path)
    db = Database(url, build_engine(url), clock)
    try:  # an upgrade waits for the writer lock like any writer: Busy if in vain
        with unreachable_as_refusal(url), busy_as_refusal(db.engine):
            _bring_to_head(db, create=create, upgrade=upgrade)
    except Exception:
        db.close()
        raise
    return db


@contextmanager
def unreachable_as_refusal(url: str) -> Iterator[None]:
    """A server that does not answer or a file that is no database: one line, not a traceback."""
    try:
        yield
    except DBAPIError as error:
        if not isinstance(error, OperationalError | sa_exc.DatabaseError):
            raise
        shown = make_url(url).render_as_string(hide_password=True)
        cause = str(error.orig).strip().splitlines()[0] if error.orig else str(error)
        raise InputError("database", shown, f"cannot be opened: {cause}") from None


def _bring_to_head(db: Database, *, create: bool, upgrade: bool) -> None:
    with db.engine.connect() as connection:
        revision = migrate.current_revision(connection)
    if revision == migrate.HEAD:
        return
    if revision is None:
        if not create:
            raise InputError("database", db.url, "not a tracker database")
        migrate.upgrade(db.engine)
        return
    if not migrate.is_known(revision):
        raise RuleViolation(
            "database", revision, "database schema is newer than this tracker; upgrade tracker"
        )
    if not upgrade:
        raise RuleViolation("database", revision, "schema is older")
    if db.path is None:
        raise RuleViolation(
            "database",
            revision,
            "shared database has an older schema: back it up (pg_dump), then upgrade it",
        )
    backup_sqlite(db.path, db.path.with_name(f"{db.path.name}.bak-{revision}"))
    migrate.upgrade(db.engine)


def backup_sqlite(source: Path, destination: Path) -> Path:
    """Copy a live SQLite database with the online backup API (consistent under WAL)."""
    if destination.exists():
        stem = destination.name
        n = 1
        while destination.exists():
            destination = destination.with_name(f"{stem}.{n}")
            n += 1
    create_private_file(destination)
    src = sqlite3.connect(source)
    dst = sqlite3.connect(destination)
    try:
        src.backup(dst)
    finally:
        dst.close()
        src.close()
    return destination


def upgrade_database(target: str | Path) -> tuple[str | None, str]:
    """Explicit upgrade (``tracker db upgrade``): returns (old revision, new revision)."""
    url = resolve_url(target)
    path = sqlite_path(url)
    if path is not None and not path.exists():
        raise InputError("database", str(path), "no database here")
    engine = build_engine(url)
    try:
        with unreachable_as_refusal(url), engine.connect() as connection:
            old = migrate.current_revision(connection)
        if old is not None and not migrate.is_known(old):
            raise RuleViolation("database", old, "database schema is newer than this tracker")
        if old != migrate.HEAD:
            if path is not None and old is not None:
                backup_sqlite(path, path.with_name(f"{path.name}.bak-{old}"))
            migrate.upgrade(engine)
    finally:
        engine.dispose()
    return old, migrate.HEAD
