"""A shared PostgreSQL lab with one login per person, built on the suite's private cluster.

Roles belong to the whole cluster, so every name carries a tag. The lab is set up the way
docs/storage.md says: an owner role owns the database and runs `tracker db workstation-grants`;
the founder's login is made and bound by `tracker db add-login` run as the owner (who may
create roles); the others' logins are made by an administrator from the SQL that `--print`
shows, and bound by the manager from her own login. The demo scenario is then replayed,
each step through the login of the person who does it.
"""

from __future__ import annotations

import uuid
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from datetime import datetime
from typing import Any

import pytest
from sqlalchemy import Connection, create_engine, select, text
from sqlalchemy.engine import make_url
from typer.testing import CliRunner, Result

from tests.cli.conftest import CLEAN_ENV
from tracker.cli import app
from tracker.db.database import Database, open_database
from tracker.demo import Replay, StepClock, demo_signer, load_scenario, scenario_path
from tracker.domain.base import Base
from tracker.domain.models import Powder
from tracker.services.admin import setup

PEOPLE = ("ines", "tomas", "priya")  # the demo's manager and technicians


@dataclass
class Cluster:
    """Roles of one test session: an owner, the workstation group, a login per person."""

    server: str
    tag: str = field(default_factory=lambda: uuid.uuid4().hex[:8])

    @property
    def owner(self) -> str:
        return f"owner_{self.tag}"

    @property
    def group(self) -> str:
        return f"staff_{self.tag}"

    def login(self, person: str) -> str:
        return f"{person}_{self.tag}"

    def admin(self, *statements: str, database: str = "postgres") -> None:
        """Run statements as the cluster's superuser (an administrator), one by one."""
        url = make_url(self.server).set(database=database)
        engine = create_engine(url, isolation_level="AUTOCOMMIT")
        try:
            with engine.connect() as conn:
                for statement in statements:
                    conn.execute(text(statement))
        finally:
            engine.dispose()

    def url(self, database: str, role: str) -> str:
        url = make_url(self.server).set(username=role, database=database)
        return url.render_as_string(hide_password=False)


def cli(*args: str) -> Result:
    return CliRunner().invoke(app, list(args), env=CLEAN_ENV)


def ok(result: Result) -> Result:
    assert result.exit_code == 0, result.output
    return result


@dataclass
class Lab:
    """One database of the cluster and a Database handle per login."""

    cluster: Cluster
    name: str
    clock: Callable[[], datetime]
    handles: dict[str, Database] = field(default_factory=dict)

    def url(self, person: str | None = None) -> str:
        """The URL of a person's login, of the owner (None), or of any role by name."""
        role = self.cluster.owner if person is None else self.cluster.login(person)
        return self.cluster.url(self.name, role)

    def db(self, person: str | None = None) -> Database:
        key = person or ""
        if key not in self.handles:
            self.handles[key] = open_database(self.url(person), clock=self.clock)
        return self.handles[key]

    @contextmanager
    def raw(self, person: str) -> Iterator[Connection]:
        """A plain SQL client with the person's own credentials, in one transaction."""
        engine = create_engine(self.url(person))
        try:
            with engine.begin() as conn:
                yield conn
        finally:
            engine.dispose()

    def rows(self) -> dict[str, list[str]]:
        """Every row of every table, read as the owner: equal before and after = no change."""
        with self.db().read_session() as session:
            return {
                table.name: sorted(repr(tuple(row)) for row in session.execute(select(table)))
                for table in Base.metadata.sorted_tables
            }

    def one(self, statement: Any) -> Any:
        """The first answer of a query, read as the owner."""
        with self.db().read_session() as session:
            return session.scalars(statement).first()

    def drilled_by(self, person: str) -> Powder:
        """The first powder a person drilled."""
        found = self.one(select(Powder).where(Powder.drilled_by == person).order_by(Powder.id))
        assert isinstance(found, Powder)
        return found

    def close(self) -> None:
        for handle in self.handles.values():
            handle.close()
        self.handles.clear()


@contextmanager
def cluster_roles(server: str) -> Iterator[Cluster]:
    """The owner (it may create roles), and a login per person plus one bound to no one."""
    cluster = Cluster(server)
    cluster.admin(f"CREATE ROLE {cluster.owner} LOGIN CREATEROLE")
    try:
        yield cluster
    finally:
        logins = [cluster.login(person) for person in (*PEOPLE, "stranger")]
        roles = [*logins, cluster.group, cluster.owner]
        cluster.admin(*(f"DROP ROLE IF EXISTS {role}" for role in roles))


def new_database(cluster: Cluster, template: str | None = None) -> str:
    name = f"lab_{uuid.uuid4().hex[:10]}"
    copy = f" TEMPLATE {template}" if template else ""
    cluster.admin(f"CREATE DATABASE {name}{copy} OWNER {cluster.owner}")
    return name


def drop_database(cluster: Cluster, name: str) -> None:
    cluster.admin(f"DROP DATABASE IF EXISTS {name} WITH (FORCE)")


Probe = Callable[[Lab, Replay, int, dict[str, Any]], None]


def demo_steps() -> list[dict[str, Any]]:
    """The scenario's steps in the order the demo runs them."""
    steps = load_scenario()["steps"]
    return sorted(steps, key=lambda s: datetime.fromisoformat(s["at"]))


def build_demo_lab(cluster: Cluster, name: str, probe: Probe | None = None) -> Lab:
    """The demo scenario on a fresh database, each step through its person's login.

    ``probe`` is called before each step (the test's chance to try it another way first).
    """
    steps = demo_steps()
    founder = load_scenario()["founder"]
    clock = StepClock(datetime.fromisoformat(founder["at"]))
    owner_url = cluster.url(name, cluster.owner)
    setup.init_database(
        owner_url,
        {"code": founder["code"], "name": founder["name"]},
        clock,
        signer=demo_signer(founder["code"]),
    ).close()
    ok(cli("--db", owner_url, "db", "workstation-grants", "--group", cluster.group))
    founders = cluster.login(founder["code"])
    ok(
        cli(
            "--db",
            owner_url,
            "--as",
            founder["code"],
            "db",
            "add-login",
            founder["code"],
            founders,
            "--group",
            cluster.group,
        )
    )
    lab = Lab(cluster, name, clock)
    replay = Replay(lab.db(founder["code"]), clock, scenario_path().parent)
    for number, step in enumerate(steps):
        if probe is not None:
            probe(lab, replay, number, step)
        replay.db = lab.db(step["by"])
        replay.run(number, step)
        if step["do"] == "operator":
            _give_login(lab, step["by"], step["args"]["code"])
    _give_login(lab, founder["code"], "stranger", bind=False)
    return lab


def _give_login(lab: Lab, manager: str, person: str, *, bind: bool = True) -> None:
    """An administrator runs the printed SQL; the manager binds the login from her own."""
    cluster = lab.cluster
    login = cluster.login(person)
    shown = ok(
        cli(
            "--db",
            lab.url(manager),
            "db",
            "add-login",
            person,
            login,
            "--print",
            "--group",
            cluster.group,
        )
    )
    sql = [line for line in shown.stdout.splitlines() if line and not line.startswith("--")]
    cluster.admin(*sql, database=lab.name)
    if bind:
        ok(
            cli(
                "--db",
                lab.url(manager),
                "--as",
                manager,
                "db",
                "add-login",
                person,
                login,
                "--group",
                cluster.group,
            )
        )


@pytest.fixture(scope="session")
def login_cluster(pg_server: str) -> Iterator[Cluster]:
    with cluster_roles(pg_server) as cluster:
        yield cluster


@pytest.fixture(scope="session")
def demo_lab_template(login_cluster: Cluster) -> Iterator[str]:
    """The demo, replayed once per session through each person's login."""
    name = new_database(login_cluster)
    try:
        build_demo_lab(login_cluster, name).close()
        yield name
    finally:
        drop_database(login_cluster, name)


@pytest.fixture
def demo_lab(login_cluster: Cluster, demo_lab_template: str) -> Iterator[Lab]:
    """A fresh copy of the demo lab for one test."""
    name = new_database(login_cluster, demo_lab_template)
    lab = Lab(login_cluster, name, StepClock(datetime.fromisoformat("2026-12-01T12:00:00+00:00")))
    yield lab
    lab.close()
    drop_database(login_cluster, name)
