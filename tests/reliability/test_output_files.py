"""No command destroys or replaces a file it did not just make (tracker/db/outputs.py).

Every command that writes a file is pointed at the lab's own database, at its live
``-wal`` and ``-shm`` (another connection holds them open, as another workstation would),
at its ``-journal`` name and at a backup copy, with and without ``--force``: each must be
refused in one line naming the option, nothing written, no ledger event recorded, the
database byte for byte as before and still verifying. An existing report is refused
without ``--force`` and kept as ``<name>.replaced-<time>`` with it; ``tracker demo`` never
builds over anything; a write killed half way leaves nothing under the final name; default
names of two runs differ. SQLite and PostgreSQL where the command touches the database.
"""

from __future__ import annotations

import hashlib
import signal
import sqlite3
import subprocess
import sys
import textwrap
from collections.abc import Iterator
from contextlib import closing
from dataclasses import dataclass
from pathlib import Path

import pytest
from typer.testing import CliRunner, Result

from tests import factories as make
from tests.cli.conftest import CLEAN_ENV, Lab
from tests.conftest import snapshot_counts
from tests.reliability.report import record
from tracker.cli import app
from tracker.db.database import Database
from tracker.domain.ids import Kind, format_id

pytestmark = pytest.mark.slow

BACKENDS = ["sqlite", pytest.param("postgresql", marks=pytest.mark.postgresql)]
OLD = b"an earlier report, already sent to the lender\n"


@dataclass(frozen=True)
class Books:
    """A database with a loan, a drilled specimen and queued labels, and a folder for files."""

    db: Database
    loan: str
    specimen: str
    folder: Path

    @property
    def path(self) -> Path | None:
        return self.db.path

    def run(self, *args: str, actor: str = "boss") -> Result:
        argv = ["--db", self.db.url, "--as", actor, *args]
        return CliRunner().invoke(app, argv, env=CLEAN_ENV, catch_exceptions=False)


@pytest.fixture
def books(db: Database, tmp_path: Path) -> Iterator[Books]:
    loan = make.loan(db)
    specimen = make.specimen(db, loan)  # its check-in queues a label
    make.powder(db, specimen)  # and so does the drill
    folder = tmp_path / "files"
    folder.mkdir()
    yield Books(db, loan, specimen, folder)


@pytest.fixture
def held(books: Books) -> Iterator[None]:
    """Another connection holds a SQLite database open: its -wal and -shm exist throughout."""
    if books.path is None:
        yield
        return
    with closing(sqlite3.connect(books.path)) as other:
        other.execute("SELECT count(*) FROM custody_event").fetchone()
        yield


REPRINT = ("--reason", "smudged", "--stock", "a4-65")


def writers(books: Books, out: Path) -> dict[str, tuple[str, list[str]]]:
    """Every command that writes a file: the option naming the file, and its arguments."""
    o, loan = str(out), books.loan
    return {
        "report return": ("--out", ["report", "return", loan, "--out", o]),
        "export specimens": ("--out", ["export", "specimens", "--loan", loan, "--out", o]),
        "export measurements": ("--out", ["export", "measurements", "--loan", loan, "--out", o]),
        "export loan": ("--out", ["export", "loan", loan, "--out", o]),
        "ledger anchor": ("--out", ["ledger", "anchor", "--out", o]),
        "ledger export": ("--out", ["ledger", "export", "--out", o]),
        "labels print": ("--out", ["labels", "print", "--stock", "a4-65", "--out", o]),
        "labels reprint": ("--out", ["labels", "reprint", books.specimen, *REPRINT, "--out", o]),
        "labels preview": ("--out", ["labels", "preview", "--stock", "a4-65", "--out", o]),
        "session plot": ("--out", ["session", "plot", "IS-00001-P", "--out", o]),
        "results --plot": ("--plot", ["results", "--plot", o]),
    }


def unforced(books: Books, out: Path) -> dict[str, tuple[str, list[str]]]:
    """Commands without --force: they never replace anything."""
    o = str(out)
    found = {
        "demo": ("--out", ["demo", "--out", o, "--no-open"]),
    }
    if books.path is not None:
        found["backup"] = ("PATH", ["backup", o])
    return found


def fingerprint(books: Books) -> dict[str, str]:
    """The database's files byte for byte (SQLite) and its rows and ledger head."""
    seen = {name: str(count) for name, count in snapshot_counts(books.db).items()}
    if books.path is not None:
        for suffix in ("", "-wal"):
            seen[f"file{suffix}"] = hashlib.sha256(
                Path(f"{books.path}{suffix}").read_bytes()
            ).hexdigest()
    return seen


def backup_copy(books: Books) -> Path:
    """A SQLite backup beside the files (PostgreSQL: another lab's SQLite database)."""
    copy = books.folder / "lab-2026-11-30.sqlite"
    if books.path is not None:
        assert books.run("backup", str(copy)).exit_code == 0
    else:
        with closing(sqlite3.connect(copy)) as other:
            other.execute("CREATE TABLE custody_event(seq)")
            other.commit()
    return copy


def targets(books: Books) -> dict[str, Path]:
    found = {"a backup copy": backup_copy(books)}
    if books.path is not None:
        found |= {
            "the database": books.path,
            "its -wal": Path(f"{books.path}-wal"),
            "its -shm": Path(f"{books.path}-shm"),
            "its -journal": Path(f"{books.path}-journal"),
        }
    return found


def refused_in_one_line(result: Result, option: str, target: Path, why: str) -> str:
    """Exit 2 and one stderr line naming the option and the file; returns what went wrong."""
    lines = result.stderr.strip().splitlines()
    if result.exit_code != 2 or len(lines) != 1:
        return f"exit {result.exit_code}, {len(lines)} line(s): {result.stderr.strip()[:200]}"
    if not lines[0].startswith(f"error: {option}: '") or target.name not in lines[0]:
        return f"does not name {option} and {target.name}: {lines[0]}"
    if why not in lines[0]:
        return f"does not say {why!r}: {lines[0]}"
    return ""


def names(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir())


def backend_of(books: Books) -> str:
    return "sqlite" if books.path is not None else "postgresql"


@pytest.mark.usefixtures("held")
@pytest.mark.parametrize("db_url", BACKENDS, indirect=True)
def test_out_at_the_database_its_logs_or_a_backup_is_refused_even_forced(books: Books) -> None:
    aims = targets(books)
    before = fingerprint(books)
    files_before = {p: p.read_bytes() for p in aims.values() if p.exists()}
    listing = names(books.folder)
    problems: list[str] = []
    tries = 0
    for aim, target in aims.items():
        commands = writers(books, target) | unforced(books, target)
        for name, (option, args) in commands.items():
            forced = [False] if name in unforced(books, target) else [False, True]
            for force in forced:
                result = books.run(*args, *(["--force"] if force else []))
                demo_sees = name == "demo" and target.exists()  # the demo refuses any file
                why = "already exists" if demo_sees else "never writes over it"
                wrong = refused_in_one_line(result, option, target, why)
                tries += 1
                if wrong:
                    problems.append(f"{name} at {aim}{' --force' * force}: {wrong}")
    assert problems == []
    assert fingerprint(books) == before  # rows, ledger head, and the files byte for byte
    assert {p: p.read_bytes() for p in files_before} == files_before
    assert names(books.folder) == listing  # nothing new, not even a partial
    assert books.run("ledger", "verify").exit_code == 0
    record(
        f"--out at the database ({backend_of(books)})",
        f"{tries} runs: {len(writers(books, books.folder))} commands with --force and "
        f"{len(unforced(books, books.folder))} without, at {', '.join(aims)}, with and "
        "without --force",
        "every one refused in one line naming the option (exit 2); 0 files written, "
        "0 events; the database byte-identical and verifying",
    )


FORCEABLE = (
    "report return",
    "export specimens",
    "export measurements",
    "export loan",
    "ledger anchor",
    "ledger export",
    "labels preview",  # while the queue still holds labels
    "labels print",
    "labels reprint",
)
RECORDED = ("report return", "labels print", "labels reprint")  # one ledger event each


@pytest.mark.parametrize("db_url", BACKENDS, indirect=True)
def test_an_existing_report_is_refused_and_kept_beside_it_when_forced(books: Books) -> None:
    problems: list[str] = []
    for name in FORCEABLE:
        target = books.folder / f"{name.replace(' ', '-')}.out"
        target.write_bytes(OLD)
        option, args = writers(books, target)[name]
        before = snapshot_counts(books.db)
        wrong = refused_in_one_line(books.run(*args), option, target, "already exists")
        if wrong or snapshot_counts(books.db) != before or target.read_bytes() != OLD:
            problems.append(f"{name} without --force: {wrong or 'something was written'}")
        forced = books.run(*args, "--force")
        kept = list(books.folder.glob(f"{target.name}.replaced-*"))
        head = snapshot_counts(books.db)["ledger_head"]
        expected_head = before["ledger_head"] + (1 if name in RECORDED else 0)
        if forced.exit_code != 0:
            problems.append(f"{name} --force: exit {forced.exit_code}: {forced.stderr[:200]}")
        elif [k.read_bytes() for k in kept] != [OLD] or target.read_bytes() == OLD:
            problems.append(
                f"{name} --force: kept {kept}, target still old: {target.read_bytes() == OLD}"
            )
        elif head != expected_head:
            problems.append(f"{name} --force: ledger head {head}, expected {expected_head}")
    anchor_only = books.folder / "fresh.pdf"
    Path(f"{anchor_only}.anchor.json").write_bytes(OLD)  # the report's companion exists
    before = snapshot_counts(books.db)
    wrong = refused_in_one_line(
        books.run("report", "return", books.loan, "--out", str(anchor_only)),
        "--out",
        Path(f"{anchor_only}.anchor.json"),
        "already exists",
    )
    assert not anchor_only.exists() and snapshot_counts(books.db) == before
    assert problems == [] and wrong == ""
    assert books.run("ledger", "verify").exit_code == 0
    record(
        f"--out at an existing report ({backend_of(books)})",
        f"{len(FORCEABLE)} commands, without and with --force; a report whose anchor exists",
        "without --force: refused, file and rows unchanged, 0 events; with it: the old file "
        "kept as <name>.replaced-<time>, one event for recorded jobs",
    )


def test_plots_refuse_an_existing_file_and_keep_it_when_forced(demo: Path) -> None:
    """The figures need the demo's instrument session and results (SQLite)."""
    folder = demo.parent
    runner = CliRunner()
    session = format_id(Kind.INSTRUMENT_SESSION, 1)  # the demo's first session
    for option, args in (
        ("--out", ["session", "plot", session]),
        ("--plot", ["results", "--loan", "KF-2026-014"]),
    ):
        target = folder / f"{args[0]}.png"
        target.write_bytes(OLD)
        argv = ["--db", str(demo), *args, option, str(target)]
        result = runner.invoke(app, argv, env=CLEAN_ENV, catch_exceptions=False)
        assert refused_in_one_line(result, option, target, "already exists") == ""
        assert target.read_bytes() == OLD
        forced = runner.invoke(app, [*argv, "--force"], env=CLEAN_ENV, catch_exceptions=False)
        assert forced.exit_code == 0, forced.stderr
        (kept,) = folder.glob(f"{target.name}.replaced-*")
        assert kept.read_bytes() == OLD and target.read_bytes().startswith(b"\x89PNG")


def test_demo_never_builds_over_a_database_or_any_file(lab: Lab, tmp_path: Path) -> None:
    with closing(sqlite3.connect(lab.path)) as other:  # a workstation has the lab open
        other.execute("SELECT count(*) FROM custody_event").fetchone()
        notes = tmp_path / "notes.txt"
        notes.write_bytes(OLD)
        orphan = tmp_path / "gone.sqlite"
        Path(f"{orphan}-wal").write_bytes(b"a log left behind")
        cases = {lab.path: lab.path, notes: notes, orphan: Path(f"{orphan}-wal")}
        files = [lab.path, Path(f"{lab.path}-wal"), Path(f"{lab.path}-shm"), notes]
        before = {p: p.read_bytes() for p in files}
        listing = names(tmp_path)
        for out, named in cases.items():
            result = CliRunner().invoke(
                app, ["demo", "--out", str(out), "--no-open"], env=CLEAN_ENV, catch_exceptions=False
            )
            why = "already exists; the demo never replaces a file — choose another path"
            assert refused_in_one_line(result, "--out", named, why) == ""
        assert {p: p.read_bytes() for p in files} == before
        assert names(tmp_path) == listing
    verify = CliRunner().invoke(app, ["--db", str(lab.path), "ledger", "verify"], env=CLEAN_ENV)
    assert verify.exit_code == 0
    record(
        "demo over a database",
        f"tracker demo --out at a database held open by another connection, a text file, "
        f"a name whose -wal is left over ({len(cases)} runs)",
        "each refused in one line naming --out, suggesting another path; every file "
        "byte-identical, nothing new in the folder",
    )


KILLED_EXPORT = textwrap.dedent(
    """
    import os, sys, time
    from typer.testing import CliRunner
    from tracker.cli import app
    from tracker.services.ledger import chain as ledger

    real = ledger.export_jsonl

    def slow(db, out):
        count = real(db, out)
        for _ in range(4000):  # several megabytes more, then stuck half way
            out.write("x" * 1000 + "\\n")
        out.flush()
        os.write(1, b"half\\n")  # past CliRunner's captured stdout
        time.sleep(60)
        return count

    ledger.export_jsonl = slow
    CliRunner().invoke(app, ["--db", sys.argv[1], "ledger", "export", "--out", sys.argv[2]])
    """
)


def test_a_killed_export_leaves_nothing_under_its_name(lab: Lab, tmp_path: Path) -> None:
    out = tmp_path / "ledger.jsonl"
    kills = 3
    for _ in range(kills):
        child = subprocess.Popen(
            [sys.executable, "-c", KILLED_EXPORT, str(lab.path), str(out)],
            stdout=subprocess.PIPE,
            text=True,
        )
        assert child.stdout is not None and child.stdout.readline().strip() == "half"
        partials = list(tmp_path.glob(".ledger.jsonl.*.partial"))
        assert partials and partials[-1].stat().st_size > 1_000_000  # caught mid-write
        child.send_signal(signal.SIGKILL)
        child.wait()
        assert not out.exists()
    done = CliRunner().invoke(
        app, ["--db", str(lab.path), "ledger", "export", "--out", str(out)], env=CLEAN_ENV
    )
    assert done.exit_code == 0 and out.read_text().count("\n") > 0  # the leftovers block nothing


@pytest.mark.parametrize("db_url", BACKENDS, indirect=True)
def test_a_failed_render_or_a_refused_record_leaves_no_file_and_no_event(
    books: Books, monkeypatch: pytest.MonkeyPatch
) -> None:
    before = snapshot_counts(books.db)
    out = books.folder / "report.pdf"
    refused = books.run("report", "return", books.loan, "--out", str(out), actor="nobody")
    assert refused.exit_code == 2 and "--as" in refused.stderr  # refused after staging
    from tracker.output import report_files

    def broken(*args: object) -> bytes:
        raise RuntimeError("the PDF library gave up")

    monkeypatch.setattr(report_files, "render", broken)
    with pytest.raises(RuntimeError, match="gave up"):
        books.run("report", "return", books.loan, "--out", str(out))
    assert snapshot_counts(books.db) == before and names(books.folder) == []


@pytest.mark.parametrize("db_url", BACKENDS, indirect=True)
def test_default_names_of_two_runs_differ(books: Books, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(books.folder)
    reports = [books.run("--json", "report", "return", books.loan) for _ in range(2)]
    assert all(r.exit_code == 0 for r in reports)
    first = sorted(p.name for p in books.folder.glob("*-return-report-*.pdf"))
    assert len(first) == 2  # two reports, two names
    printed = books.run("--json", "labels", "print", "--stock", "a4-65")
    assert printed.exit_code == 0
    assert books.run("labels", "queue", books.specimen).exit_code == 0
    again = books.run("--json", "labels", "print", "--stock", "a4-65")
    assert again.exit_code == 0
    pdfs = sorted(p.name for p in books.folder.glob("labels-*.pdf"))
    assert len(pdfs) == 2
    assert len(set(pdfs)) == 2 and len(set(first)) == 2
