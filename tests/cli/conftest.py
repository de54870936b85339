"""Helpers for driving the ``tracker`` command line through Typer's CliRunner.

Every invocation clears TRACKER_DB, TRACKER_OPERATOR and TRACKER_LABEL_STOCKS so that the
developer's own environment can never leak a database, an operator or a stocks file into a test.
"""

from __future__ import annotations

import json
import shutil
import sqlite3
from collections.abc import Iterator
from dataclasses import dataclass, replace
from datetime import date, timedelta
from pathlib import Path
from typing import Any

import pytest
import typer
from typer.testing import CliRunner, Result

from tests.conftest import snapshot_counts
from tracker.cli import app
from tracker.db.database import open_database

CLEAN_ENV: dict[str, str | None] = {
    "TRACKER_DB": None,
    "TRACKER_OPERATOR": None,
    "TRACKER_LABEL_STOCKS": None,
}
SQLITE_SUFFIXES = ("", "-wal", "-shm")


def subcommands(command: Any) -> dict[str, Any]:
    """A group's commands by name, through Click's own API: `tracker` loads each command's
    module only when it is asked for, so the groups hold no ready-made dict of them."""
    if not hasattr(command, "list_commands"):
        return {}
    ctx = typer.Context(command)
    return {name: command.get_command(ctx, name) for name in command.list_commands(ctx)}


def invoke(
    *args: str, db: Path | str | None = None, actor: str | None = None, as_json: bool = False
) -> Result:
    """Run ``tracker [--db DB] [--as ACTOR] [--json] ARGS...``; global options come first."""
    argv: list[str] = []
    if db is not None:
        argv += ["--db", str(db)]
    if actor is not None:
        argv += ["--as", actor]
    if as_json:
        argv.append("--json")
    argv += list(args)
    return CliRunner().invoke(app, argv, env=CLEAN_ENV, catch_exceptions=False)


def ok_json(result: Result) -> Any:
    """Exit 0 and exactly one JSON document on stdout (json.loads refuses trailing data)."""
    assert result.exit_code == 0, (result.exit_code, result.stdout, result.stderr)
    return json.loads(result.stdout)


def counts(path: Path | str) -> dict[str, int]:
    """Row count of every table plus the ledger head, read through tracker's own opener."""
    db = open_database(path)
    try:
        return snapshot_counts(db)
    finally:
        db.close()


def copy_sqlite(source: Path, target: Path) -> Path:
    """Copy a closed SQLite database together with any WAL/SHM files beside it."""
    for suffix in SQLITE_SUFFIXES:
        src = Path(str(source) + suffix)
        if src.exists():
            shutil.copyfile(src, Path(str(target) + suffix))
    return target


def checkpoint(path: Path) -> None:
    """Fold the WAL into the main file so the file alone holds every row."""
    connection = sqlite3.connect(path)
    try:
        connection.execute("PRAGMA wal_checkpoint(TRUNCATE)")
    finally:
        connection.close()


def past_day() -> str:
    return (date.today() - timedelta(days=200)).isoformat()


def future_due_day() -> str:
    return (date.today() + timedelta(days=400)).isoformat()


@dataclass(frozen=True)
class Lab:
    """A small lab database built through the CLI, and the IDs it handed out."""

    path: Path
    manager: str
    technician: str
    box: str
    loan: str
    on_hand: str  # a specimen that has been checked in
    expected: str  # a specimen listed on the loan but not yet received
    powder: str  # 2.561 mg drilled, 1.500 mg of it dissolved
    solution: str  # 1.0000 g of solution, no aliquots taken


def build_lab(path: Path) -> Lab:
    manager, tech = "ysolde", "bram"

    def run(*args: str, actor: str | None = manager) -> Any:
        return ok_json(invoke(*args, db=path, actor=actor, as_json=True))

    run("init", "--code", manager, "--name", "Ysolde Marrin", actor=None)
    public = path.with_name(f"{tech}.pub")  # the technician makes a key, the manager adds it
    run("key", "new", "--out", str(public), actor=tech)
    run(
        "operator",
        "add",
        tech,
        "--name",
        "Bram Okonjo",
        "--role",
        "technician",
        "--key",
        str(public),
    )
    building = run("location", "add", "building", "Annex K")["item"]["id"]
    room = run("location", "add", "room", "K-104", "--in", building)["item"]["id"]
    box = run("location", "add", "box", "Box 3", "--in", room)["item"]["id"]
    run("lender", "add", "Fernhollow Natural History Collection", "--code", "FNHC")
    loan = run(
        "loan",
        "add",
        "--lender",
        "Fernhollow Natural History Collection",
        "--reference",
        "FH-77",
        "--title",
        "Invented teeth for CLI tests",
        "--borrower",
        "Ysolde Marrin",
        "--tissues",
        "enamel",
        "--max-per-specimen",
        "6 mg",
        "--max-total",
        "20 mg",
        "--max-specimens",
        "3",
        "--received",
        past_day(),
        "--due",
        future_due_day(),
    )["item"]["id"]
    on_hand = run("specimen", "add", "--loan", "FH-77", "--catalog", "FNHC Z-1")["item"]["id"]
    expected = run("specimen", "add", "--loan", "FH-77", "--catalog", "FNHC Z-2")["item"]["id"]
    run("checkin", on_hand, "--condition", "complete", "--to", box, actor=tech)
    powder = run(
        "drill",
        on_hand,
        "--tissue",
        "enamel",
        "--tare",
        "1203.557 mg",
        "--gross",
        "1206.118 mg",
        "--to",
        box,
        actor=tech,
    )["item"]["id"]
    solution = run(
        "dissolve",
        powder,
        "--acid",
        "2 M HNO3",
        "--powder-taken",
        "1.500 mg",
        "--vial-tare",
        "6.3812 g",
        "--vial-gross",
        "7.3812 g",
        actor=tech,
    )["item"]["id"]
    conc = ("concentration", solution, "--element", "Ca", "--value", "450 ug/g", "--rel-u", "1.5")
    run(*conc, actor=tech)
    return Lab(path, manager, tech, box, loan, on_hand, expected, powder, solution)


@pytest.fixture(scope="session")
def lab_template(tmp_path_factory: pytest.TempPathFactory) -> Lab:
    return build_lab(tmp_path_factory.mktemp("cli-lab") / "lab.sqlite")


@pytest.fixture
def lab(lab_template: Lab, tmp_path: Path) -> Iterator[Lab]:
    """A private copy of the lab database for one test."""
    path = copy_sqlite(lab_template.path, tmp_path / "lab.sqlite")
    yield replace(lab_template, path=path)


@pytest.fixture(scope="session")
def demo_db(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The demo database, built once by `tracker demo`; tests copy it before changing it."""
    out = tmp_path_factory.mktemp("demo") / "demo.sqlite"
    result = invoke("demo", "--out", str(out))
    assert result.exit_code == 0, result.stderr
    return out


@pytest.fixture
def demo(demo_db: Path, tmp_path: Path) -> Path:
    """A private copy of the demo database for a test that writes."""
    return copy_sqlite(demo_db, tmp_path / "demo.sqlite")


# the lab with a row in every described table, for the audit's report tests (both backends)
from tests.services.audit_lab import (  # noqa: E402
    audited_lab_template,
    books,
    pg_audited_lab_template,
)

__all__ = ["audited_lab_template", "books", "pg_audited_lab_template"]
