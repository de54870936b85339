"""Fixtures shared by the whole suite.

``db`` is parametrised over SQLite and PostgreSQL: every test that takes it runs
on both backends, each time on a fresh database copied from a template that
already holds the schema, a manager (``boss``) and a technician (``tech``), each with
a registered signing key (``tests/keys.py``: unlocked in every test).
"""

from __future__ import annotations

import itertools
import os
import shutil
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any

import pytest
from hypothesis import settings
from sqlalchemy import create_engine, func, select, text
from sqlalchemy.engine import make_url

from tests import keys
from tests.pg import private_cluster, server_binaries
from tests.reliability import report
from tracker.db.database import Database, open_database
from tracker.domain.base import Base
from tracker.domain.models import CustodyEvent
from tracker.services.admin import setup

# The shared-database lab with one login per person (PostgreSQL tests that ask for it).
pytest_plugins = ("tests.logins",)

START = datetime(2026, 1, 5, 9, 0, tzinfo=UTC)

# CI runs the same generated cases every time (derandomized: a red run is a change in the
# code, not a new draw); a developer's run explores new cases. TRACKER_HYPOTHESIS=ci picks
# the CI profile (.ci/run sets it); a case found locally belongs in a plain regression test.
settings.register_profile("ci", derandomize=True, database=None, print_blob=True)
if os.environ.get("TRACKER_HYPOTHESIS"):
    settings.load_profile(os.environ["TRACKER_HYPOTHESIS"])


@dataclass
class TickingClock:
    """Deterministic time: each reading is one second after the previous one."""

    now: datetime = START
    step: timedelta = timedelta(seconds=1)

    def __call__(self) -> datetime:
        self.now += self.step
        return self.now


@pytest.fixture(scope="session", autouse=True)
def _signing_keys(tmp_path_factory: pytest.TempPathFactory) -> Iterator[None]:
    """A config folder of the session's own with the seeded operators' key files, and the
    passphrase that unlocks them where a command runs in a child process."""
    with pytest.MonkeyPatch.context() as patch:
        patch.setenv("TRACKER_CONFIG_DIR", str(tmp_path_factory.mktemp("config")))
        patch.setenv("TRACKER_CHECKPOINT_DIR", str(tmp_path_factory.mktemp("checkpoints")))
        patch.setenv("TRACKER_PASSPHRASE", keys.PASSPHRASE)
        patch.delenv("TRACKER_PASSPHRASE_FILE", raising=False)
        keys.write_key_files()
        yield


@pytest.fixture(autouse=True)
def _unlocked() -> None:
    """Every test starts with the invented keys unlocked (a test may lock them)."""
    keys.unlock_all()


def seed(target: str) -> None:
    """Schema, a manager (boss), a technician (tech), their keys and ledger events."""
    db = setup.init_database(
        target, {"code": "boss", "name": "Bea Oswald"}, TickingClock(), signer=keys.signer("boss")
    )
    tech = {"code": "tech", "name": "Teo Chandler", "role": "technician"}
    setup.add_operator(db, "boss", tech | {"public_key": keys.signer("tech").public_hex})
    db.close()


# ---------------------------------------------------------------- SQLite


@pytest.fixture(scope="session")
def sqlite_template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("template") / "template.sqlite"
    seed(str(path))
    return path


# ---------------------------------------------------------------- PostgreSQL


@pytest.fixture(scope="session")
def pg_server() -> Iterator[str]:
    """URL of a PostgreSQL server's maintenance database, or skip (fail in CI)."""
    url = os.environ.get("TRACKER_TEST_PG_URL")
    if url:
        yield url
        return
    binaries = server_binaries()
    if binaries is None:
        reason = (
            "PostgreSQL server binaries not found (install postgresql or set TRACKER_TEST_PG_URL)"
        )
        if os.environ.get("TRACKER_REQUIRE_PG") == "1":
            pytest.fail(reason + " — TRACKER_REQUIRE_PG=1 forbids skipping")
        pytest.skip(reason)
    with private_cluster(binaries) as started:
        yield started


def _admin(url: str) -> Any:
    return create_engine(make_url(url).set(database="postgres"), isolation_level="AUTOCOMMIT")


_names = itertools.count()


@pytest.fixture(scope="session")
def pg_template(pg_server: str) -> Iterator[str]:
    name = f"tracker_tmpl_{os.getpid()}"
    admin = _admin(pg_server)
    with admin.connect() as conn:
        conn.execute(text(f"DROP DATABASE IF EXISTS {name}"))
        conn.execute(text(f"CREATE DATABASE {name}"))
    seed(make_url(pg_server).set(database=name).render_as_string(hide_password=False))
    yield name
    with admin.connect() as conn:
        conn.execute(text(f"DROP DATABASE IF EXISTS {name} WITH (FORCE)"))
    admin.dispose()


# ---------------------------------------------------------------- the fixture tests use


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgresql)])
def db_url(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[str]:
    """URL of a fresh, seeded database on the parametrised backend."""
    if request.param == "sqlite":
        target = tmp_path / "test.sqlite"
        shutil.copyfile(request.getfixturevalue("sqlite_template"), target)
        target.chmod(0o600)
        yield str(target)
        return
    server = request.getfixturevalue("pg_server")
    template = request.getfixturevalue("pg_template")
    name = f"tracker_t{os.getpid()}_{next(_names)}"
    admin = _admin(server)
    with admin.connect() as conn:
        conn.execute(text(f"CREATE DATABASE {name} TEMPLATE {template}"))
    yield make_url(server).set(database=name).render_as_string(hide_password=False)
    with admin.connect() as conn:
        conn.execute(text(f"DROP DATABASE IF EXISTS {name} WITH (FORCE)"))
    admin.dispose()


@pytest.fixture
def clock() -> TickingClock:
    return TickingClock()


@pytest.fixture
def db(db_url: str, clock: TickingClock) -> Iterator[Database]:
    database = open_database(db_url, clock=clock)
    yield database
    database.close()


def snapshot_counts(db: Database) -> dict[str, int]:
    """Row count of every table plus the ledger head: equal before and after = nothing written."""
    with db.read_session() as session:
        counts = {
            table.name: session.scalar(select(func.count()).select_from(table)) or 0
            for table in Base.metadata.sorted_tables
        }
        counts["ledger_head"] = session.scalar(select(func.max(CustodyEvent.seq))) or 0
    return counts


Counts = Callable[[], dict[str, int]]  # the ``counts`` fixture: snapshot_counts(db) when called


@pytest.fixture
def counts(db: Database) -> Counts:
    return lambda: snapshot_counts(db)


def pytest_addoption(parser: pytest.Parser) -> None:
    parser.addoption(
        "--reliability-page",
        metavar="PAGE",
        type=Path,
        help="after a run that passed, write its reliability table into PAGE "
        "(--reliability-page=docs/reliability.md: with '=', or the path is read as tests to run), "
        "between the page's marker lines",
    )
    parser.addoption(
        "--reliability-rows",
        metavar="FILE",
        type=Path,
        help="start from the rows an earlier run kept in FILE, and keep this run's rows there "
        "(CI: the everyday suite keeps them, the slow suite writes the page from both)",
    )


def pytest_sessionstart(session: pytest.Session) -> None:
    """Rows kept by an earlier run (``--reliability-rows``) join this run's table."""
    kept: Path | None = session.config.getoption("--reliability-rows")
    if kept is not None:
        report.load_rows(kept)


def pytest_terminal_summary(terminalreporter: Any, exitstatus: int, config: pytest.Config) -> None:
    """The reliability tests' sizes and findings (tests/reliability/report.py), printed;
    written into the reliability page only by a run that passed."""
    if not report.ROWS:
        return
    kept: Path | None = config.getoption("--reliability-rows")
    if kept is not None and exitstatus == 0:
        report.save_rows(kept)
    terminalreporter.section("reliability: sizes and findings of this run")
    terminalreporter.write_line(report.table())
    page: Path | None = config.getoption("--reliability-page")
    if page is None:
        return
    if exitstatus != 0:
        terminalreporter.write_line(f"{page} not written: this run did not pass")
        return
    report.write_page(page)
    terminalreporter.write_line(f"{page}: its table now holds this run's {len(report.ROWS)} rows")
