"""Engine factory: one place that knows SQLite's and PostgreSQL's connection rules.

SQLite gets WAL, foreign keys, a busy timeout and — for write units of work —
``BEGIN IMMEDIATE``, so two writers queue for the lock instead of failing late.
PostgreSQL write units of work take one transaction-scoped advisory lock, so
ledger appends and allowance checks are serialised across workstations.

Either way a writer waits for the lock at most :func:`busy_wait_ms` (30 s, or
``TRACKER_BUSY_WAIT`` seconds); what it is told then is ``tracker.db.writer_lock``'s.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from sqlalchemy import Engine, create_engine, event
from sqlalchemy.engine import make_url

WRITE_OPTION = "tracker_write"
# The writer's name for others to read while it holds the lock (PostgreSQL application_name).
HOLDER_OPTION = "tracker_holder"
BUSY_TIMEOUT_MS = 30_000
BUSY_WAIT_VARIABLE = "TRACKER_BUSY_WAIT"
# Arbitrary constant naming the lab-wide writer lock on PostgreSQL.
PG_WRITER_LOCK = 0x7261636B  # "rack"


def resolve_url(target: str | Path) -> str:
    """Turn a ``--db`` value (a file path or an SQLAlchemy URL) into a URL."""
    text = str(target)
    if "://" not in text:
        return f"sqlite:///{Path(text).expanduser().resolve()}"
    url = make_url(text)
    if url.drivername in ("postgresql", "postgres"):
        url = url.set(drivername="postgresql+psycopg")
    return url.render_as_string(hide_password=False)


def sqlite_path(url: str) -> Path | None:
    """The database file of a SQLite URL, or None for other backends."""
    parsed = make_url(url)
    if parsed.get_backend_name() != "sqlite" or not parsed.database:
        return None
    return Path(parsed.database)


def busy_wait_ms() -> int:
    """How long a writer waits for another's lock: ``TRACKER_BUSY_WAIT`` seconds, else 30 s.

    Read when an engine is built. A value that is not a number of seconds is refused
    with one line rather than ignored, so a typo never means waiting the default.
    """
    text = os.environ.get(BUSY_WAIT_VARIABLE, "").strip()
    if not text:
        return BUSY_TIMEOUT_MS
    try:
        seconds = float(text)
    except ValueError:
        seconds = -1.0
    if not 0 <= seconds <= 24 * 3600:  # NaN fails this too
        from tracker.domain.errors import InputError

        raise InputError(BUSY_WAIT_VARIABLE, text, "is not a number of seconds (0 to 86400)")
    return round(seconds * 1000)


def create_private_file(path: Path) -> None:
    """Create an empty database file readable and writable by its owner only."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd = os.open(path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o600)
    os.close(fd)


def build_engine(url: str) -> Engine:
    """Create an engine with the backend's rules installed; nothing connects yet."""
    backend = make_url(url).get_backend_name()
    wait_ms = busy_wait_ms()
    if backend == "sqlite":
        engine = create_engine(url, connect_args={"timeout": wait_ms / 1000})
        _install_sqlite_rules(engine, wait_ms)
    elif backend == "postgresql":
        engine = create_engine(url, pool_pre_ping=True)
        _install_postgresql_rules(engine, wait_ms)
    else:
        raise ValueError(f"unsupported database backend {backend!r}; use SQLite or PostgreSQL")
    return engine


def writer(engine: Engine) -> Engine:
    """A view of ``engine`` whose transactions take the writer lock."""
    return engine.execution_options(**{WRITE_OPTION: True})


def _install_sqlite_rules(engine: Engine, wait_ms: int) -> None:
    @event.listens_for(engine, "connect")
    def _on_connect(dbapi_connection: Any, _record: Any) -> None:
        dbapi_connection.isolation_level = None  # we issue BEGIN ourselves, below
        cursor = dbapi_connection.cursor()
        cursor.execute("PRAGMA foreign_keys = ON")
        cursor.execute(f"PRAGMA busy_timeout = {wait_ms}")
        cursor.execute("PRAGMA journal_mode = WAL")
        cursor.execute("PRAGMA synchronous = NORMAL")
        cursor.close()

    @event.listens_for(engine, "begin")
    def _on_begin(connection: Any) -> None:
        write = connection.get_execution_options().get(WRITE_OPTION, False)
        connection.exec_driver_sql("BEGIN IMMEDIATE" if write else "BEGIN")


def _install_postgresql_rules(engine: Engine, wait_ms: int) -> None:
    # lock_timeout 0 would mean "wait for ever": a wait of 0 s is the shortest there is.
    take_lock = (
        f"SET LOCAL lock_timeout = {max(wait_ms, 1)}; "
        f"SELECT pg_advisory_xact_lock({PG_WRITER_LOCK}); "
        "SET LOCAL lock_timeout = DEFAULT"
    )

    @event.listens_for(engine, "begin")
    def _on_begin(connection: Any) -> None:
        options = connection.get_execution_options()
        if not options.get(WRITE_OPTION, False):
            return
        holder = options.get(HOLDER_OPTION)
        if holder:  # named before waiting: pg_stat_activity shows who waits and who holds
            connection.exec_driver_sql(
                "SELECT set_config('application_name', %(name)s, true)", {"name": holder}
            )
        connection.exec_driver_sql(take_lock)  # one round trip; the wait bounded, then reset
