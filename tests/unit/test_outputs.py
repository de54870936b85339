"""The one writer of output files (tracker/db/outputs.py), on its own.

The SQLite signatures are checked against files the standard library's sqlite3 module
writes itself (a database, a live write-ahead log, a rollback journal spilled mid-
transaction), never against constants copied from our code.
"""

from __future__ import annotations

import errno
import hashlib
import os
import sqlite3
from collections.abc import Iterator
from contextlib import closing
from datetime import UTC, datetime
from pathlib import Path
from typing import BinaryIO

import pytest

from tracker.db import outputs
from tracker.db.outputs import TargetExists
from tracker.domain.errors import InputError

MOMENT = datetime(2026, 11, 30, 14, 5, 9, tzinfo=UTC)
OLD = b"the lender's copy, made last week"
NEW = b"a new report"


def at_moment() -> datetime:
    return MOMENT


def names(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir())


def sha(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


@pytest.fixture
def live(tmp_path: Path) -> Iterator[Path]:
    """A WAL-mode database held open by another connection: its -wal and -shm exist."""
    path = tmp_path / "lab.sqlite"
    with closing(sqlite3.connect(path)) as connection:
        connection.execute("PRAGMA journal_mode=WAL")
        connection.execute("CREATE TABLE t(x)")
        connection.execute("INSERT INTO t VALUES (1)")
        connection.commit()
        assert Path(f"{path}-wal").exists() and Path(f"{path}-shm").exists()
        yield path


def spilled_journal(folder: Path) -> Path:
    """A rollback journal as SQLite writes it once a transaction spills to the file."""
    path = folder / "old.sqlite"
    connection = sqlite3.connect(path, isolation_level=None)
    connection.execute("CREATE TABLE t(x)")
    for _ in range(50):
        connection.execute("INSERT INTO t VALUES (?)", (b"x" * 4000,))
    connection.execute("PRAGMA cache_size=2")  # a tiny cache: the change must spill
    connection.execute("BEGIN")
    connection.execute("UPDATE t SET x = ?", (b"y" * 4000,))
    kept = folder / "journal-copy"
    kept.write_bytes(Path(f"{path}-journal").read_bytes())
    connection.execute("ROLLBACK")
    connection.close()
    return kept


def test_sqlite_signatures_are_those_sqlite_itself_writes(live: Path, tmp_path: Path) -> None:
    wal_copy = tmp_path / "wal-copy"
    wal_copy.write_bytes(Path(f"{live}-wal").read_bytes())
    assert outputs.sqlite_kind(live) == "an SQLite database"
    assert outputs.sqlite_kind(wal_copy) == "an SQLite write-ahead log"
    assert outputs.sqlite_kind(spilled_journal(tmp_path)) == "an SQLite rollback journal"
    text = tmp_path / "notes.txt"
    text.write_text("SQLite format 2 is not a database")
    assert outputs.sqlite_kind(text) is None


@pytest.mark.parametrize("force", [False, True])
@pytest.mark.parametrize("name", ["lab.sqlite", "lab.sqlite-wal", "lab.sqlite-shm"])
def test_the_open_database_and_its_live_files_are_never_a_target(
    live: Path, name: str, force: bool
) -> None:
    target = live.with_name(name)
    before = target.read_bytes()
    with pytest.raises(InputError, match="is the lab's database or one of its files") as refused:
        outputs.write_new(target, NEW, "--out", force=force, database=live)
    assert refused.value.field == "--out" and refused.value.value == str(target)
    assert not isinstance(refused.value, TargetExists)
    assert target.read_bytes() == before
    assert sorted(p.name for p in live.parent.iterdir()) == sorted(
        ["lab.sqlite", "lab.sqlite-wal", "lab.sqlite-shm"]
    )


def test_links_to_the_database_are_the_database(live: Path, tmp_path: Path) -> None:
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    soft, hard = elsewhere / "report.pdf", elsewhere / "copy.pdf"
    soft.symlink_to(live)
    os.link(live, hard)
    side = elsewhere / "side.pdf"
    side.symlink_to(Path(f"{live}-journal"))  # no journal now: still the database's name
    for target in (soft, hard, side):
        with pytest.raises(InputError, match="the lab's database"):
            outputs.write_new(target, NEW, "--out", force=True, database=live)


def test_any_sqlite_file_or_a_databases_side_name_is_refused_even_forced(
    live: Path, tmp_path: Path
) -> None:
    backup = tmp_path / "lab-2026-11-30.sqlite"
    with closing(sqlite3.connect(live)) as source, closing(sqlite3.connect(backup)) as copy:
        source.backup(copy)
    journal = spilled_journal(tmp_path)
    for target in (backup, journal, live.with_name("lab.sqlite.bak-0006")):
        if not target.exists():
            target.write_bytes(backup.read_bytes())
        before = target.read_bytes()
        with pytest.raises(InputError, match="tracker never writes over it, even with --force"):
            outputs.write_new(target, NEW, "--out", force=True)  # no open database known
        assert target.read_bytes() == before
    for suffix in outputs.SIDE_SUFFIXES:  # not there yet, but SQLite would read them
        with pytest.raises(InputError, match="belongs to the SQLite database"):
            outputs.write_new(Path(f"{backup}{suffix}"), NEW, "--out", force=True)
        assert not Path(f"{backup}{suffix}").exists()


def test_an_existing_file_is_refused_then_kept_aside_when_forced(tmp_path: Path) -> None:
    target = tmp_path / "return.pdf"
    target.write_bytes(OLD)
    with pytest.raises(TargetExists, match="already exists; choose another name, or add --force"):
        outputs.write_new(target, NEW, "--out")
    assert target.read_bytes() == OLD and names(tmp_path) == ["return.pdf"]
    written = outputs.write_new(target, NEW, "--out", force=True, clock=at_moment)
    kept = tmp_path / "return.pdf.replaced-20261130T140509Z"  # UTC, as restore names it
    assert written.replaced == kept and kept.read_bytes() == OLD
    assert target.read_bytes() == NEW and written.sha256 == sha(NEW)
    target.write_bytes(OLD + b" (edited)")
    again = outputs.write_new(target, NEW, "--out", force=True, clock=at_moment)
    assert again.replaced == tmp_path / "return.pdf.replaced-20261130T140509Z.1"
    assert again.replaced.read_bytes() == OLD + b" (edited)" and kept.read_bytes() == OLD


def test_restore_and_force_share_one_name(tmp_path: Path) -> None:
    path = tmp_path / "lab.sqlite"
    assert outputs.replaced_name(path, MOMENT).name == "lab.sqlite.replaced-20261130T140509Z"
    (tmp_path / "lab.sqlite.replaced-20261130T140509Z").touch()
    assert outputs.replaced_name(path, MOMENT).name == "lab.sqlite.replaced-20261130T140509Z.1"


def test_a_forced_symlink_is_moved_aside_not_what_it_points_at(tmp_path: Path) -> None:
    precious = tmp_path / "precious.txt"
    precious.write_bytes(OLD)
    link = tmp_path / "out.pdf"
    link.symlink_to(precious)
    written = outputs.write_new(link, NEW, "--out", force=True, clock=at_moment)
    assert written.replaced is not None and written.replaced.is_symlink()
    assert precious.read_bytes() == OLD and not link.is_symlink() and link.read_bytes() == NEW


def test_folders_and_special_files_are_refused(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="is a folder"):
        outputs.write_new(tmp_path, NEW, "--out", force=True)
    with pytest.raises(InputError, match="its folder does not exist"):
        outputs.write_new(tmp_path / "missing" / "x.pdf", NEW, "--out")
    fifo = tmp_path / "pipe"
    os.mkfifo(fifo)
    with pytest.raises(InputError, match="is not a regular file"):
        outputs.write_new(fifo, NEW, "--out", force=True)
    assert fifo.exists()


def test_a_write_that_fails_half_way_leaves_nothing(tmp_path: Path) -> None:
    def half_then_fail(stream: BinaryIO) -> None:
        stream.write(b"x" * 3_000_000)  # past the buffer: bytes are on disk
        raise RuntimeError("the renderer broke")

    target = tmp_path / "ledger.jsonl"
    with pytest.raises(RuntimeError, match="the renderer broke"):
        outputs.write_new(target, half_then_fail, "--out")
    assert names(tmp_path) == []


def test_a_name_that_appears_while_writing_is_not_replaced(tmp_path: Path) -> None:
    target = tmp_path / "anchor.json"
    staged = outputs.stage(tmp_path, target.name, NEW, "--out")
    target.write_bytes(OLD)  # another program, a moment later
    with pytest.raises(TargetExists):
        outputs.publish(staged.temp, target, "--out")
    outputs.discard(staged)
    assert target.read_bytes() == OLD and names(tmp_path) == ["anchor.json"]


def test_a_published_file_has_the_usual_mode_and_streams_hash_as_written(tmp_path: Path) -> None:
    mask = 0o027
    old = os.umask(mask)
    try:
        written = outputs.write_new(tmp_path / "a.txt", lambda s: s.write(NEW), "--out")
    finally:
        os.umask(old)
    assert written.sha256 == sha(NEW)
    assert (tmp_path / "a.txt").stat().st_mode & 0o777 == 0o666 & ~mask


def test_files_published_together_take_the_first_free_set_of_names(tmp_path: Path) -> None:
    (tmp_path / "r-2.pdf.anchor.json").write_bytes(OLD)  # only the anchor of set 2 is taken
    staged = [
        outputs.stage(tmp_path, "r.pdf", NEW, "--out"),
        outputs.stage(tmp_path, "r.pdf.anchor.json", b"{}", "--out"),
        outputs.stage(tmp_path, "photo", b"jpeg bytes", "--out", reuse=True),
    ]
    (tmp_path / "r.pdf").write_bytes(OLD)

    def names() -> Iterator[list[Path]]:
        for path in outputs.variants(tmp_path / "r.pdf"):
            folder = path.with_name(f"{path.stem}-attachments")
            yield [path, path.with_name(f"{path.name}.anchor.json"), folder / "photo"]

    chosen, kept = outputs.publish_first_free(staged, names(), "--out")
    outputs.discard(*staged)
    assert [p.name for p in chosen] == ["r-3.pdf", "r-3.pdf.anchor.json", "photo"]
    assert kept == [None, None, None]
    assert sorted(p.name for p in tmp_path.iterdir()) == [
        "r-2.pdf.anchor.json",
        "r-3-attachments",
        "r-3.pdf",
        "r-3.pdf.anchor.json",
        "r.pdf",
    ]  # set 2's report and folder, made before its anchor was found taken, are gone again
    assert (tmp_path / "r.pdf").read_bytes() == OLD
    assert (tmp_path / "r-2.pdf.anchor.json").read_bytes() == OLD
    assert (tmp_path / "r-3-attachments" / "photo").read_bytes() == b"jpeg bytes"


def test_a_photo_already_there_with_the_same_bytes_is_left_as_it_is(tmp_path: Path) -> None:
    folder = tmp_path / "r-attachments"
    folder.mkdir()
    photo = folder / sha(b"jpeg bytes")
    photo.write_bytes(b"jpeg bytes")
    before = photo.stat().st_ino
    staged = [
        outputs.stage(tmp_path, "r.csv", NEW, "--out"),
        outputs.stage(tmp_path, photo.name, b"jpeg bytes", "--out", reuse=True),
    ]
    chosen, _ = outputs.publish_first_free(staged, iter([[tmp_path / "r.csv", photo]]), "--out")
    outputs.discard(*staged)
    assert chosen[0].read_bytes() == NEW and photo.stat().st_ino == before
    assert not list(tmp_path.glob(".*.partial"))


def test_without_hard_links_whole_copies_are_renamed_onto_free_names_only(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    def no_links(*args: object, **kwargs: object) -> None:
        raise OSError(errno.EPERM, "Operation not permitted")  # as on a FAT file system

    monkeypatch.setattr(os, "link", no_links)
    target = tmp_path / "x.pdf"
    outputs.write_new(target, OLD, "--out")
    assert target.read_bytes() == OLD
    written = outputs.write_new(target, NEW, "--out", force=True, clock=at_moment)
    assert written.replaced is not None and written.replaced.read_bytes() == OLD
    assert target.read_bytes() == NEW
    staged = outputs.stage(tmp_path, "y.pdf", NEW, "--out")
    (tmp_path / "y.pdf").write_bytes(OLD)
    with pytest.raises(TargetExists):
        outputs.publish(staged.temp, tmp_path / "y.pdf", "--out")
    outputs.discard(staged)
    assert (tmp_path / "y.pdf").read_bytes() == OLD
    assert not list(tmp_path.glob(".*"))
