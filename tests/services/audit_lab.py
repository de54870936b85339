"""A lab with a row in every table the ledger describes, on either backend, for the audit tests.

The invented demo scenario (run through the services, as `tracker demo` runs it), then the
few actions it does not take, so that every described table holds at least two rows: lab
materials and settings, corrections (one propagating to a column and a re-reduced session),
backdated entries, label print jobs, a second shipment and Sr curve. Tampering helpers act
as someone with the database owner's credentials would: with raw SQL, past the triggers.
"""

from __future__ import annotations

import os
import shutil
from collections.abc import Iterator
from dataclasses import dataclass
from datetime import timedelta
from decimal import Decimal
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import create_engine, func, select, text
from sqlalchemy.engine import Connection, Engine, make_url

from tests.conftest import TickingClock, _admin
from tracker.db.database import open_database
from tracker.demo import run_scenario, scenario_path
from tracker.domain.models import (
    Aliquot,
    ContainerStatus,
    CustodyEvent,
    Loan,
    LoanStatus,
    Solution,
)
from tracker.output import jobs
from tracker.services.admin import backdating, materials
from tracker.services.bench import solutions
from tracker.services.corrections import weighings
from tracker.services.instrument import screening
from tracker.services.labels import handling
from tracker.services.loans import shipments

MANAGER = "ines"  # the demo's founder


def add_the_rest(target: str, out: Path) -> None:
    """The actions the demo does not take, a day after its last event."""
    db = open_database(target)
    with db.read_session() as session:
        last = session.scalar(select(func.max(CustodyEvent.at)))
        consumed = select(Aliquot).where(Aliquot.status == ContainerStatus.CONSUMED)
        aliquot = session.scalars(consumed.order_by(Aliquot.id)).first()
        available = select(Solution).where(Solution.status == ContainerStatus.AVAILABLE)
        solution = session.scalars(available.order_by(Solution.id)).first()
        loan = session.scalars(select(Loan).where(Loan.status == LoanStatus.OPEN)).first()
        assert aliquot and solution and loan and last
        ids = aliquot.public_id, aliquot.mass_g, solution.public_id, loan.public_id
    db.close()
    aliquot_id, grams, solution_id, loan_id = ids
    clock = TickingClock(last + timedelta(days=1))
    db = open_database(target, clock=clock)
    try:
        for n in (1, 2):
            material = {"name": f"Invented carbonate {n}", "formula": "CaCO3"}
            materials.add_material(db, MANAGER, material)
        handling.set_uri_prefix(db, MANAGER, {"uri_prefix": "HTTPS://LAB.EXAMPLE/T/"})
        backdating.set_backdating_window(db, MANAGER, {"window": "36 h"})
        for extra in ("0.01", "0.02"):  # an aliquot's mass: its column and session follow
            gross = f"{2000 + grams * 1000 + Decimal(extra):.2f} mg"
            weighings.correct_weighing(
                db,
                MANAGER,
                {
                    "item": aliquot_id,
                    "tare": "2000.00 mg",
                    "gross": gross,
                    "readability": "0.01 mg",
                    "reason": "balance drift found",
                },
            )
        for days in (3, 4):  # dated back beyond the window: a manager's, flagged
            stated = (clock.now - timedelta(days=days)).isoformat()
            solutions.record_concentration(
                db,
                MANAGER,
                {
                    "solution": solution_id,
                    "element": "Sr",
                    "value": f"{days} ug/g",
                    "uncertainty": "0.1 ug/g",
                    "measured_at": stated,
                },
            )
        jobs.print_queue(db, MANAGER, stock="a4-65", out=out / "labels-1.pdf")  # the demo's
        handling.queue_labels(db, MANAGER, {"items": [solution_id], "copies": 1})
        jobs.print_queue(db, MANAGER, stock="a4-65", out=out / "labels-2.pdf")
        day = clock.now.date().isoformat()
        shipments.add_shipment(
            db, MANAGER, {"loan": loan_id, "direction": "outgoing", "shipped_on": day}
        )
        curve = (scenario_path().parent / "instrument" / "sr-curve-INVENTED.csv").read_bytes()
        screening.add_curve(
            db, MANAGER, {"name": "second-INVENTED", "content": curve, "filename": "c.csv"}
        )
    finally:
        db.close()


@dataclass
class Books:
    """A copy of the lab on one backend, and raw SQL against it as its owner."""

    target: str  # what `open_database` and `--db` take
    backend: str

    def engine(self) -> Engine:
        url = f"sqlite:///{self.target}" if self.backend == "sqlite" else self.target
        return create_engine(url)

    def raw(self, statement: str, **values: Any) -> list[Any]:
        """Run one statement as the owner, past every trigger and foreign key."""
        engine = self.engine()
        try:
            with engine.begin() as connection:
                _past_the_rules(connection, self.backend)
                result = connection.execute(text(statement), values)
                return list(result) if result.returns_rows else []
        finally:
            engine.dispose()


def _past_the_rules(connection: Connection, backend: str) -> None:
    if backend == "postgresql":  # the owner may: no trigger or foreign key fires
        connection.execute(text("SET session_replication_role = replica"))
        return
    connection.execute(text("PRAGMA foreign_keys = OFF"))
    names = connection.execute(text("SELECT name FROM sqlite_master WHERE type = 'trigger'"))
    for (name,) in list(names):
        connection.execute(text(f'DROP TRIGGER "{name}"'))


@pytest.fixture(scope="session")
def audited_lab_template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    folder = tmp_path_factory.mktemp("audit-lab")
    path = folder / "lab.sqlite"
    run_scenario(path)
    add_the_rest(str(path), folder)
    return path


@pytest.fixture(scope="session")
def pg_audited_lab_template(
    pg_server: str, tmp_path_factory: pytest.TempPathFactory
) -> Iterator[str]:
    name = f"tracker_audit_lab_{os.getpid()}"
    admin = _admin(pg_server)
    with admin.connect() as connection:
        connection.execute(text(f"DROP DATABASE IF EXISTS {name}"))
        connection.execute(text(f"CREATE DATABASE {name}"))
    url = make_url(pg_server).set(database=name).render_as_string(hide_password=False)
    run_scenario(url)
    add_the_rest(url, tmp_path_factory.mktemp("audit-lab-pg"))
    yield name
    with admin.connect() as connection:
        connection.execute(text(f"DROP DATABASE IF EXISTS {name} WITH (FORCE)"))
    admin.dispose()


_copies = iter(range(1_000_000))


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgresql)])
def books(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[Books]:
    """A fresh copy of the lab on the parametrised backend."""
    if request.param == "sqlite":
        target = tmp_path / "lab.sqlite"
        shutil.copyfile(request.getfixturevalue("audited_lab_template"), target)
        target.chmod(0o600)
        yield Books(str(target), "sqlite")
        return
    server = request.getfixturevalue("pg_server")
    template = request.getfixturevalue("pg_audited_lab_template")
    name = f"tracker_audit_{os.getpid()}_{next(_copies)}"
    admin = _admin(server)
    with admin.connect() as connection:
        connection.execute(text(f"CREATE DATABASE {name} TEMPLATE {template}"))
    url = make_url(server).set(database=name).render_as_string(hide_password=False)
    yield Books(url, "postgresql")
    with admin.connect() as connection:
        connection.execute(text(f"DROP DATABASE IF EXISTS {name} WITH (FORCE)"))
    admin.dispose()
