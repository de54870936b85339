"""The plan: a deterministic stream of service requests that builds a synthetic lab.

Every step names a service action (the keys of :data:`tracker.demo.SERVICES`), who does
it, when, the raw request a person would type, and — when it makes something — the public
ID it will get. Both executors (the services one call per action, and the bulk executor)
consume the same stream, so their databases can be compared row for row.

Everything named here is invented and says so ("Synthetic Museum 0001"); no real
institution, person or datum appears.
"""

from __future__ import annotations

import heapq
import itertools
import random
from collections.abc import Iterator
from dataclasses import dataclass, field
from datetime import datetime, timedelta
from typing import Any

from benchmarks.shape import START, Shape
from tracker.db.keyring import Keyring
from tracker.domain.ids import Kind, format_id
from tracker.domain.signing import Signer, seeded_signer

FOUNDER = {"code": "mgr01", "name": "Synthetic Manager 01"}
MANAGERS = ("mgr01", "mgr02")
TECHNICIANS = ("tech01", "tech02", "tech03", "tech04", "tech05")


def bench_signer(code: str) -> Signer:
    """A synthetic operator's invented key, derived from a public seed (it proves nothing)."""
    return seeded_signer(f"tracker bench key {code}")


def bench_keyring() -> Keyring:
    """Every synthetic operator's key, unlocked: what the benchmark's databases sign with."""
    return Keyring({s.key_id: s for s in map(bench_signer, (*MANAGERS, *TECHNICIANS))})


STANDARD = "Synthetic Ca bracketing standard"
REFERENCES = {"Synthetic calcite RM-1": 0.62, "Synthetic seawater RM-2": 1.83}  # accepted δ ‰
PROFILE = "synthetic-mc-ca"
RATIO = "44/40"


@dataclass(frozen=True)
class Step:
    """One service request of the plan."""

    at: datetime
    by: str
    do: str
    args: dict[str, Any]
    makes: str | None = None  # the public ID the step creates, as the plan predicts it


class Ids:
    """The next primary key of every kind, as the database will hand them out."""

    def __init__(self) -> None:
        self._next: dict[Kind, int] = {}

    def take(self, kind: Kind) -> str:
        number = self._next.get(kind, 1)
        self._next[kind] = number + 1
        return format_id(kind, number)


@dataclass
class World:
    """What the setup made that every loan uses: places by purpose, lenders."""

    places: dict[str, list[str]] = field(default_factory=dict)  # purpose -> location IDs
    lenders: list[str] = field(default_factory=list)


# (alias, kind, name, parent alias, purpose) — a small invented building.
_ROOMS = [
    ("hall", "building", "Synthetic Hall A", None, None),
    ("prep", "room", "A1 sample preparation", "hall", None),
    ("clean", "room", "A2 clean lab", "hall", None),
    ("loancab", "cabinet", "Loan cabinet", "prep", None),
    ("bench", "cabinet", "Drill bench", "prep", "bench"),
    ("desiccator", "cabinet", "Desiccator", "prep", None),
    ("fridge", "freezer", "Clean-lab fridge", "clean", None),
    ("columns", "cabinet", "Column bench", "clean", None),
]
_BOXES = [  # (purpose, parent alias, name pattern, how many)
    ("loan", "loancab", "Loan box {:02d}", 8),
    ("powder", "desiccator", "Powder box {:02d}", 8),
    ("solution", "fridge", "Solution rack {:02d}", 8),
    ("aliquot", "fridge", "Aliquot rack {:02d}", 8),
    ("cut", "columns", "Cut rack {:02d}", 6),
]


class Clock:
    """Setup steps one minute apart from the start of the decade."""

    def __init__(self) -> None:
        self.now = START

    def tick(self) -> datetime:
        self.now += timedelta(minutes=1)
        return self.now


def setup_steps(shape: Shape, ids: Ids, world: World) -> Iterator[Step]:
    """People, places, reference materials and their accepted values, the profile, lenders."""
    clock = Clock()
    founder = FOUNDER["code"]
    for code in (*MANAGERS[1:], *TECHNICIANS):
        role = "manager" if code in MANAGERS else "technician"
        name = f"Synthetic {role.title()} {code[-2:]}"
        person = {"code": code, "name": name, "role": role}
        person["public_key"] = bench_signer(code).public_hex
        yield Step(clock.tick(), founder, "operator", person)
    yield from _places(clock, ids, world)
    for name in (STANDARD, *REFERENCES):
        matrix = "synthetic solution" if name == STANDARD else "synthetic powder"
        made: dict[str, Any] = {"name": name, "element": "Ca", "matrix": matrix}
        yield Step(clock.tick(), founder, "reference", made, ids.take(Kind.REFERENCE_MATERIAL))
    for name, value in REFERENCES.items():
        args: dict[str, Any] = {
            "reference": name,
            "ratio": RATIO,
            "scale": STANDARD,
            "value": value,
            "two_sd": 0.15,
            "source": "synthetic long-term record (invented)",
        }
        yield Step(clock.tick(), founder, "reference_value", args)
    yield Step(clock.tick(), founder, "profile", {"name": PROFILE, "definition": PROFILE_DEF})
    for number in range(1, shape.lenders + 1):
        args = {
            "name": f"Synthetic Museum {number:04d}",
            "institution_code": f"SM{number:04d}",
            "contact_name": f"Synthetic Curator {number:04d}",
            "contact_email": f"loans{number:04d}@museum.invalid",
        }
        lender = ids.take(Kind.LENDER)
        world.lenders.append(lender)
        yield Step(clock.tick(), founder, "lender", args, lender)


PROFILE_DEF = {
    "format": "csv",
    "columns": {
        "run_order": "Run",
        "sample_name": "Sample",
        "ratios": {RATIO: "44Ca/40Ca"},
        "errors": {RATIO: "2SE"},
    },
}


def _places(clock: Clock, ids: Ids, world: World) -> Iterator[Step]:
    founder = FOUNDER["code"]
    alias: dict[str, str] = {}
    for key, kind, name, parent, purpose in _ROOMS:
        alias[key] = ids.take(Kind.LOCATION)
        args = {"kind": kind, "name": name, "parent": alias[parent] if parent else None}
        if purpose:
            world.places.setdefault(purpose, []).append(alias[key])
        yield Step(clock.tick(), founder, "location", args, alias[key])
    for purpose, parent, pattern, count in _BOXES:
        shelf = ids.take(Kind.LOCATION)
        yield Step(
            clock.tick(),
            founder,
            "location",
            {"kind": "shelf", "name": f"Shelf for {purpose}s", "parent": alias[parent]},
            shelf,
        )
        for n in range(1, count + 1):
            box = ids.take(Kind.LOCATION)
            world.places.setdefault(purpose, []).append(box)
            args = {"kind": "box", "name": pattern.format(n), "parent": shelf}
            yield Step(clock.tick(), founder, "location", args, box)


def plan_steps(shape: Shape, seed: int) -> Iterator[Step]:
    """The whole plan, in time order: setup, then each loan's window, returns merged in."""
    from benchmarks.plan_loan import LoanPlanner  # the planner imports this module

    ids, world = Ids(), World()
    yield from setup_steps(shape, ids, world)
    pending: list[tuple[datetime, int, Step]] = []
    order = itertools.count()
    for loan in shape.loans:
        planner = LoanPlanner(loan, ids, world, random.Random(seed * 7919 + loan.index))
        for step in planner.window():
            while pending and pending[0][0] <= step.at:
                yield heapq.heappop(pending)[2]
            yield step
        for step in planner.returns():
            heapq.heappush(pending, (step.at, next(order), step))
    while pending:
        yield heapq.heappop(pending)[2]
