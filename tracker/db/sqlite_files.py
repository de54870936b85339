"""SQLite database files as files: copy a live one, look inside one, put one back.

Copies always go through SQLite's online backup API, never a byte copy of the
file: it takes SQLite's own locks, includes what is still in the write-ahead
log, and so gives a consistent database even while other workstations write.
Every file made here is readable and writable by its owner only.
"""

from __future__ import annotations

import sqlite3
from contextlib import closing
from pathlib import Path

from sqlalchemy import create_engine

from tracker.db.database import Database
from tracker.db.engine import BUSY_TIMEOUT_MS, create_private_file
from tracker.db.outputs import sqlite_kind

SIDE_FILES = ("-wal", "-shm")


def looks_like_sqlite(path: Path) -> bool:
    """Whether the file starts with SQLite's 16-byte header (a cheap first check)."""
    return sqlite_kind(path) == "an SQLite database"


def copy_live(source: Path, destination: Path) -> None:
    """Copy a (possibly busy) database into a new private file with the backup API."""
    create_private_file(destination)
    try:
        with (
            closing(sqlite3.connect(source, timeout=BUSY_TIMEOUT_MS / 1000)) as src,
            closing(sqlite3.connect(destination)) as dst,
        ):
            src.backup(dst)
    except BaseException:
        destination.unlink(missing_ok=True)
        raise


def fold_log(path: Path) -> None:
    """Fold a closed database's write-ahead log into its file, so the file alone is whole."""
    with closing(sqlite3.connect(path, timeout=BUSY_TIMEOUT_MS / 1000)) as connection:
        connection.execute("PRAGMA wal_checkpoint(TRUNCATE)")


def read_only(path: Path) -> Database:
    """Open a database file without changing it: no upgrade, no WAL switch, no writes."""
    url = f"sqlite:///file:{path}?mode=ro&uri=true"
    engine = create_engine(url, connect_args={"timeout": BUSY_TIMEOUT_MS / 1000})
    return Database(url, engine)


def schema_revision(path: Path) -> str | None:
    """The Alembic revision stamped in a file, or None when it has none."""
    with closing(sqlite3.connect(f"file:{path}?mode=ro", uri=True)) as connection:
        tables = {row[0] for row in connection.execute("SELECT name FROM sqlite_master")}
        if "alembic_version" not in tables:
            return None
        row = connection.execute("SELECT version_num FROM alembic_version").fetchone()
        return None if row is None else str(row[0])


def keep_aside(path: Path, aside: Path) -> None:
    """Keep a database before it is replaced: a consistent copy, or its bytes if unreadable."""
    try:
        copy_live(path, aside)
        return
    except sqlite3.DatabaseError:
        pass  # not a readable database (that may be why it is being replaced): keep the bytes
    create_private_file(aside)
    aside.write_bytes(path.read_bytes())
    for suffix in SIDE_FILES:
        side = Path(f"{path}{suffix}")
        if side.exists():
            kept = Path(f"{aside}{suffix}")
            create_private_file(kept)
            kept.write_bytes(side.read_bytes())


def put_back(source: Path, target: Path) -> None:
    """Make ``target`` hold exactly ``source``'s database.

    A readable target is overwritten through the backup API, under SQLite's locks, so
    other workstations that have it open see the restored data (not a deleted file).
    An unreadable target is replaced by a fresh private copy renamed into place.
    """
    if not target.exists():
        copy_live(source, target)
        return
    try:
        with (
            closing(sqlite3.connect(source)) as src,
            closing(sqlite3.connect(target, timeout=BUSY_TIMEOUT_MS / 1000)) as dst,
        ):
            if dst.execute("PRAGMA quick_check").fetchall() == [("ok",)]:
                src.backup(dst)
                return
    except sqlite3.DatabaseError:
        pass  # not a database at all: replace the file below
    staged = target.with_name(f".{target.name}.restoring")
    staged.unlink(missing_ok=True)
    copy_live(source, staged)
    for suffix in SIDE_FILES:
        Path(f"{target}{suffix}").unlink(missing_ok=True)
    staged.replace(target)
