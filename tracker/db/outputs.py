"""Every file tracker writes for a person: never the database, never over a file it did not make.

One module that every writer uses (reports and their anchors, label PDFs and previews,
exports, figures, anchors, the ledger export, backups, the demo, the interface's screens),
so the rules below hold for every command and screen alike:

* The open database, its ``-wal``/``-shm``/``-journal`` files, and any file that is an SQLite
  database, write-ahead log or rollback journal (a backup, an upgrade's ``.bak-<revision>``
  copy, another lab's database) are never a target, whatever the option, even when forced.
  The open database is recognised by device and inode, so links to it are refused too.
* Any other existing file is refused unless the caller forces it; forced, it is first moved
  aside as ``<name>.replaced-<UTC time>`` (the name `tracker restore` gives the file it
  replaces, from :func:`replaced_name`).
* Content goes to a hidden temporary file in the target's folder, flushed to disk, and is
  then published with a hard link, which fails when the name exists. A crash therefore never
  leaves half a file under the final name, and a file that appeared while the content was
  being written is never replaced.

This module sits in the ``db`` layer because it is the lowest one every writer may import
(services write anchors and backups) and because knowing which files are databases is the
database layer's business. It uses the standard library only.
"""

from __future__ import annotations

import errno
import hashlib
import io
import os
import secrets
import shutil
import stat
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path
from typing import TYPE_CHECKING, BinaryIO

from tracker.domain.errors import InputError
from tracker.domain.timeutil import Clock, utcnow

if TYPE_CHECKING:
    from _typeshed import ReadableBuffer

# The three SQLite file signatures (sqlite.org, "Database File Format": §1.3 the database
# header string, §4.1 the WAL header magic 0x377f0682/0x377f0683 stored big-endian, §3 the
# rollback journal header; from memory, and tests/unit/test_outputs.py checks each against
# files the sqlite3 module itself writes). A journal's header may be all zeros while its
# transaction is open, so journals are also recognised by name beside their database.
SQLITE_HEADER = b"SQLite format 3\x00"
WAL_MAGICS = (bytes.fromhex("377f0682"), bytes.fromhex("377f0683"))
JOURNAL_MAGIC = bytes.fromhex("d9d505f920a163d7")
SIDE_SUFFIXES = ("-wal", "-shm", "-journal")
KINDS = {  # what each kind of SQLite file is, said to a person who named one as a target
    "an SQLite database": "a lab's database or a backup of one",
    "an SQLite write-ahead log": "part of a database",
    "an SQLite rollback journal": "part of a database",
}
STAMP = "%Y%m%dT%H%M%SZ"
MAX_VARIANTS = 1000  # name-2 … name-1000: beyond that something is wrong with the folder
# Where hard links are not available (some network and FAT file systems) publishing falls
# back to a rename after checking that the name is free, which leaves a moment's race.
NO_LINKS = {errno.EPERM, errno.EOPNOTSUPP, errno.ENOTSUP, errno.EMLINK, errno.EXDEV}

Content = bytes | Callable[[BinaryIO], object]


class TargetExists(InputError):
    """The target is an existing file that was not to be replaced (exit 2).

    A separate class so the interface can word it for a screen instead of for ``--force``.
    """


def replaced_name(path: Path, moment: datetime) -> Path:
    """``<name>.replaced-<UTC time>`` beside ``path``; ``.1``, ``.2`` … if that is taken."""
    stamp = moment.strftime(STAMP)
    aside = path.with_name(f"{path.name}.replaced-{stamp}")
    n = 1
    while os.path.lexists(aside):
        aside = path.with_name(f"{path.name}.replaced-{stamp}.{n}")
        n += 1
    return aside


def variants(path: Path) -> Iterator[Path]:
    """``path``, then ``<stem>-2<suffix>``, ``<stem>-3<suffix>`` …: names for a free one."""
    yield path
    for n in range(2, MAX_VARIANTS + 1):
        yield path.with_name(f"{path.stem}-{n}{path.suffix}")


def sqlite_kind(path: Path) -> str | None:
    """What SQLite file ``path`` is by its first bytes ("an SQLite database" …), or None.

    Only regular files are opened: reading a named pipe or a device would block or consume.
    """
    try:
        if not stat.S_ISREG(path.stat().st_mode):
            return None
        with path.open("rb") as handle:
            head = handle.read(len(SQLITE_HEADER))
    except OSError:
        return None
    if head == SQLITE_HEADER:
        return "an SQLite database"
    if head[:4] in WAL_MAGICS:
        return "an SQLite write-ahead log"
    if head[:8] == JOURNAL_MAGIC:
        return "an SQLite rollback journal"
    return None


def check_target(
    path: Path,
    field: str,
    *,
    force: bool = False,
    database: Path | None = None,
    forceable: bool = True,
) -> None:
    """Refuse, in one line naming ``field`` and the path, a target that may not be written.

    ``database`` is the open database's file (None on PostgreSQL). ``forceable`` says whether
    the command offers ``--force`` at all (a backup or the demo never replace anything).
    """
    if not path.parent.is_dir():
        raise InputError(field, str(path), "its folder does not exist")
    if path.is_dir():
        raise InputError(field, str(path), "is a folder; give a file name")
    never = "tracker never writes over it" + (", even with --force" if forceable else "")
    if database is not None and _is_database_file(path, database):
        raise InputError(field, str(path), f"is the lab's database or one of its files; {never}")
    kind = sqlite_kind(path)
    if kind is not None:
        raise InputError(field, str(path), f"is {kind} ({KINDS[kind]}); {never}")
    owner = _side_file_owner(path)
    if owner is not None:
        raise InputError(field, str(path), f"belongs to the SQLite database {owner}; {never}")
    if not os.path.lexists(path):
        return
    if not path.is_symlink() and not _is_regular(path):
        raise InputError(field, str(path), "is not a regular file; give a file name")
    if not forceable:
        raise TargetExists(field, str(path), "already exists; tracker never replaces a file here")
    if not force:
        raise TargetExists(
            field,
            str(path),
            "already exists; choose another name, or add --force to replace it "
            f"(the old file is then kept as {path.name}.replaced-<UTC time>)",
        )


def _is_regular(path: Path) -> bool:
    try:
        return stat.S_ISREG(path.stat().st_mode)
    except OSError:
        return False


def _is_database_file(path: Path, database: Path) -> bool:
    """Whether ``path`` is the database or one of its side files, by inode or by name."""
    try:
        target = path.stat()
    except OSError:
        target = None
    resolved_db = database.resolve()
    resolved = path.resolve()
    for suffix in ("", *SIDE_SUFFIXES):
        own = Path(f"{resolved_db}{suffix}")
        if resolved == own:
            return True
        try:
            known = Path(f"{database}{suffix}").stat()
        except OSError:
            continue
        if target is not None and (target.st_dev, target.st_ino) == (known.st_dev, known.st_ino):
            return True
    return False


def _side_file_owner(path: Path) -> Path | None:
    """The SQLite database ``path`` would be a ``-wal``/``-shm``/``-journal`` file of."""
    resolved = path.resolve()
    for suffix in SIDE_SUFFIXES:
        if resolved.name.endswith(suffix):
            owner = resolved.with_name(resolved.name[: -len(suffix)])
            if sqlite_kind(owner) == "an SQLite database":
                return owner
    return None


@dataclass(frozen=True)
class Staged:
    """Content written whole to a hidden temporary file, waiting to be published."""

    temp: Path
    sha256: str
    size: int
    reuse: bool = False  # named by its digest: an existing file with these bytes will do


def temp_path(folder: Path, name: str) -> Path:
    """A fresh hidden name in ``folder`` for a file built there before it is published."""
    return folder / f".{name}.{secrets.token_hex(4)}.partial"


def stage(
    folder: Path,
    name: str,
    content: Content,
    field: str,
    *,
    reuse: bool = False,
    private: bool = False,
) -> Staged:
    """Write ``content`` (bytes, or a function writing to a binary stream) to a new hidden
    file in ``folder``, flushed to disk; the caller publishes or discards it. A ``private``
    file (a private key) is readable and writable by its owner only from its first byte."""
    target = folder / name
    if not folder.is_dir():
        raise InputError(field, str(target), "its folder does not exist")
    temp = temp_path(folder, name)
    mode = 0o600 if private else 0o666
    try:
        fd = os.open(temp, os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_BINARY", 0), mode)
    except OSError as error:
        raise InputError(field, str(target), f"cannot be written ({error.strerror})") from None
    sink = _Hashing(io.FileIO(fd, "wb"))
    try:
        with io.BufferedWriter(sink, buffer_size=1 << 20) as stream:
            if isinstance(content, bytes):
                stream.write(content)
            else:
                content(stream)
    except BaseException as error:
        temp.unlink(missing_ok=True)
        if isinstance(error, OSError):
            raise InputError(field, str(target), f"cannot be written ({error.strerror})") from None
        raise
    return Staged(temp, sink.digest.hexdigest(), sink.size, reuse)


class _Hashing(io.RawIOBase):
    """A file that hashes what is written to it and is flushed to disk when closed."""

    def __init__(self, raw: io.FileIO) -> None:
        super().__init__()
        self.raw, self.digest, self.size = raw, hashlib.sha256(), 0

    def writable(self) -> bool:
        return True

    def write(self, data: ReadableBuffer, /) -> int:
        written = self.raw.write(data) or 0
        self.digest.update(memoryview(data).cast("B")[:written])
        self.size += written
        return written

    def close(self) -> None:
        if not self.closed:
            try:
                os.fsync(self.raw.fileno())
            finally:
                self.raw.close()
        super().close()


def discard(*staged: Staged | Path) -> None:
    """Remove temporary files (after publishing, only the temporary name goes)."""
    for item in staged:
        (item.temp if isinstance(item, Staged) else item).unlink(missing_ok=True)


def publish(
    temp: Path,
    target: Path,
    field: str,
    *,
    force: bool = False,
    database: Path | None = None,
    clock: Clock = utcnow,
    forceable: bool = True,
) -> Path | None:
    """Give the staged file ``temp`` its final name; return where a forced-out file was kept.

    The target is checked again (it may have changed since the command started); a name
    that exists by the time of the link is refused, never replaced.
    """
    kept = _link(temp, target, field, force, database, clock, forceable)
    temp.unlink(missing_ok=True)
    _sync_folder(target.parent)
    return kept


def _link(
    temp: Path,
    target: Path,
    field: str,
    force: bool,
    database: Path | None,
    clock: Clock,
    forceable: bool = True,
) -> Path | None:
    """The second name for ``temp`` (the temporary name stays until the caller drops it)."""
    check_target(target, field, force=force, database=database, forceable=forceable)
    kept = _move_aside(target, clock, field) if force and os.path.lexists(target) else None
    try:
        os.link(temp, target)
    except FileExistsError:
        raise TargetExists(
            field, str(target), "appeared while it was being written; nothing was replaced"
        ) from None
    except OSError as error:
        if error.errno not in NO_LINKS:
            raise InputError(field, str(target), f"cannot be written ({error.strerror})") from None
        _copy_if_free(temp, target, field)
    return kept


def _move_aside(target: Path, clock: Clock, field: str) -> Path:
    """Keep a file about to be replaced under its ``.replaced-<time>`` name."""
    moment = clock()
    while True:
        aside = replaced_name(target, moment)
        try:
            os.link(target, aside, follow_symlinks=False)
        except FileExistsError:
            continue  # taken since replaced_name looked: take the next one
        except OSError as error:
            if error.errno not in NO_LINKS:
                raise
            _rename_if_free(target, aside, field)
            return aside
        target.unlink()
        return aside


def _rename_if_free(source: Path, target: Path, field: str) -> None:
    if os.path.lexists(target):
        raise TargetExists(
            field, str(target), "appeared while it was being written; nothing was replaced"
        )
    source.rename(target)


def _copy_if_free(temp: Path, target: Path, field: str) -> None:
    """Without hard links: a whole copy of the staged file renamed to the target if that is
    still free (the staged file stays for the caller, as after a link)."""
    copy = temp_path(temp.parent, target.name)
    try:
        with temp.open("rb") as source, copy.open("xb") as out:
            shutil.copyfileobj(source, out, 1 << 20)
            out.flush()
            os.fsync(out.fileno())
        shutil.copymode(temp, copy)
        _rename_if_free(copy, target, field)
    finally:
        copy.unlink(missing_ok=True)


def _sync_folder(folder: Path) -> None:
    """Make the new name durable (POSIX; elsewhere opening a folder is not possible)."""
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


@dataclass(frozen=True)
class Written:
    """A published file: where it is, its SHA-256, and where a replaced file was kept."""

    path: Path
    sha256: str
    replaced: Path | None


def write_new(
    target: Path,
    content: Content,
    field: str,
    *,
    force: bool = False,
    database: Path | None = None,
    clock: Clock = utcnow,
    private: bool = False,
) -> Written:
    """Check, stage and publish one file (the usual case: nothing recorded in between)."""
    check_target(target, field, force=force, database=database)
    staged = stage(target.parent, target.name, content, field, private=private)
    try:
        kept = publish(staged.temp, target, field, force=force, database=database, clock=clock)
    finally:
        discard(staged)
    return Written(target, staged.sha256, kept)


def publish_first_free(
    staged: Sequence[Staged],
    names: Iterator[Sequence[Path]],
    field: str,
    *,
    force: bool = False,
    database: Path | None = None,
    clock: Clock = utcnow,
) -> tuple[Sequence[Path], list[Path | None]]:
    """Publish files that belong together (a report, its anchor, its photos) under the first
    set of ``names`` where none is taken; ``force`` applies to the first set only.

    Used after a ledger event was recorded: the file whose digest the event holds must end
    up somewhere, and never over another file. A missing folder of a file in the set (the
    photos' folder) is made, and removed again if the set does not fit. A file staged with
    ``reuse`` (named by its own digest) is satisfied by an existing file with its bytes.
    """
    first = True
    for candidate in names:
        made: list[Path] = []
        kept: list[Path | None] = []
        try:
            for item, target in zip(staged, candidate, strict=True):
                kept.append(_place(item, target, made, field, first and force, database, clock))
        except TargetExists:
            for path in reversed(made):  # ours, made a moment ago
                _undo(path)
            first = False
            continue
        for folder in {path.parent for path in candidate}:
            _sync_folder(folder)
        return candidate, kept  # the temporary names go with the caller's discard
    raise InputError(field, str(staged[0].temp.parent), "no free file name; choose another folder")


def _place(
    item: Staged,
    target: Path,
    made: list[Path],
    field: str,
    force: bool,
    database: Path | None,
    clock: Clock,
) -> Path | None:
    if not target.parent.exists() and target.parent.parent.is_dir():
        target.parent.mkdir()
        made.append(target.parent)
    if item.reuse and holds(target, item.sha256):
        return None
    kept = _link(item.temp, target, field, force, database, clock)
    made.append(target)
    return kept


def _undo(path: Path) -> None:
    try:
        if path.is_dir():
            path.rmdir()  # only if still empty: nothing of anyone else's goes
        else:
            path.unlink(missing_ok=True)
    except OSError:
        pass


def holds(path: Path, sha256: str) -> bool:
    """Whether ``path`` is a regular file holding exactly the bytes with this SHA-256."""
    if path.is_symlink() or not path.is_file():
        return False
    digest = hashlib.sha256()
    with path.open("rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest() == sha256
