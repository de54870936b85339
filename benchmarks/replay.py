"""Executors of the plan. ``run_services``: every step through its real service, one call,
one transaction, one event each — the reference the bulk executor is compared with.

Both start from the same empty database made by ``setup.init_database`` (the founder at the
start of the decade) and check that every step made the ID the plan predicted.
"""

from __future__ import annotations

from collections.abc import Iterable
from pathlib import Path
from typing import Any

from benchmarks.plan import FOUNDER, Step, bench_keyring, bench_signer
from benchmarks.shape import START
from tracker.db.database import Database
from tracker.demo import SERVICES, StepClock
from tracker.services.admin import setup


def new_database(target: str | Path, clock: StepClock) -> Database:
    """An empty tracker database whose ledger opens at the start of the synthetic decade."""
    clock.now = START
    signer = bench_signer(FOUNDER["code"])
    return setup.init_database(target, FOUNDER, clock, signer=signer, keyring=bench_keyring())


def made_id(answer: Any) -> str | None:
    """The public ID a service's answer names (``Done.item.id``), if any."""
    item = getattr(answer, "item", None)
    value = getattr(item, "id", None)
    return value if isinstance(value, str) else None


def check_made(step: Step, made: str | None) -> None:
    if step.makes is not None and made != step.makes:
        raise AssertionError(f"{step.do} at {step.at} made {made}, the plan expected {step.makes}")


def call_service(db: Database, clock: StepClock, step: Step) -> Any:
    """One step through its service, with the ledger clock at the step's time."""
    clock.now = step.at
    answer = SERVICES[step.do](db, step.by, step.args)
    check_made(step, made_id(answer))
    return answer


def run_services(db: Database, clock: StepClock, steps: Iterable[Step]) -> int:
    """Every step through the services; returns how many steps ran."""
    count = 0
    for step in steps:
        call_service(db, clock, step)
        count += 1
    return count
