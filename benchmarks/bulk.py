"""The bulk executor: the plan's hot actions written in batches, the rare ones by the services.

Bench actions (listing, checking in, drilling, dissolving, concentrations, aliquots, batches,
positions, cuts, moves, disposals, returns) — all but a few thousand of a decade's million
events — go through the twins in ``bulk_material``/``bulk_lab`` and are written by
``BulkWriter``. Everything else (people, places, lenders, loans, reference values, the
instrument profile, session imports and reductions, a loan's return) is called on the real
service after a flush, so it reads exactly what the services would have left, and its event
chains onto the bulk events. The result is the database the services would have built.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from time import perf_counter

from sqlalchemy import func, select, text

from benchmarks.bulk_ctx import Ctx
from benchmarks.bulk_lab import HANDLERS as LAB
from benchmarks.bulk_material import HANDLERS as MATERIAL
from benchmarks.bulk_state import State
from benchmarks.bulk_writer import BulkWriter
from benchmarks.plan import Step
from benchmarks.replay import call_service, check_made, made_id
from tracker.db.database import Database
from tracker.demo import StepClock
from tracker.domain.base import Base
from tracker.domain.signing import Signer
from tracker.domain.timeutil import as_utc
from tracker.services.core import authority as signing

HANDLERS = {**MATERIAL, **LAB}
FLUSH_ROWS = 50_000


@dataclass
class BulkReport:
    steps: int = 0
    by_service: int = 0
    seconds: float = 0.0
    counts: dict[str, int] = field(default_factory=dict)


class BulkExecutor:
    def __init__(self, db: Database, clock: StepClock) -> None:
        self.db, self.clock = db, clock
        self.state = State()
        self.writer = BulkWriter(db)
        self.state.sync(db)
        self.report = BulkReport()
        with db.read_session() as session:  # who and where the services would record
            self.origin = signing.origin(session, db)
        self._signers: dict[str, Signer] = {}

    def signer(self, code: str) -> Signer:
        """The key the services would sign ``code``'s events with (their own choice)."""
        if code not in self._signers:
            found = signing.signer_for(signing.read(self.db), code, self.db.keyring)
            if found is None:
                raise RuntimeError("the benchmark's ledger has no signing keys")
            self._signers[code] = found
        return self._signers[code]

    def run(self, steps: Iterable[Step]) -> BulkReport:
        started = perf_counter()
        for step in steps:
            self.step(step)
        self.finish()
        self.report.seconds = perf_counter() - started
        return self.report

    def step(self, step: Step) -> None:
        self.report.steps += 1
        self.report.counts[step.do] = self.report.counts.get(step.do, 0) + 1
        handler = HANDLERS.get(step.do)
        if handler is None:
            self._by_service(step)
            return
        now = as_utc(step.at)
        operator = self.state.operator(step.by)
        signer = self.signer(operator.code)
        ctx = Ctx(now, operator, self.state, self.writer, signer, self.origin)
        made = handler(ctx, step.args)
        check_made(step, getattr(made, "public_id", None))
        if self.writer.pending >= FLUSH_ROWS:
            self.writer.flush()

    def _by_service(self, step: Step) -> None:
        """A rare action: flush, call the real service, mirror what it made, take its head."""
        self.writer.flush()
        answer = call_service(self.db, self.clock, step)
        self.state.head_seq, self.state.head_hash = answer.event_seq, answer.event_hash
        self.state.mirror(step.do, step.args, made_id(answer), as_utc(step.at), step.by)
        self.report.by_service += 1

    def finish(self) -> None:
        self.writer.flush()
        if self.db.backend == "postgresql":
            _advance_sequences(self.db)


def _advance_sequences(db: Database) -> None:
    """Rows written with explicit keys leave PostgreSQL's sequences behind: catch them up."""
    with db.engine.begin() as connection:
        for table in Base.metadata.sorted_tables:
            column = table.c.get("id")
            if column is None or not column.autoincrement:
                continue
            top = connection.scalar(select(func.max(column)))
            if top:
                connection.execute(
                    text("SELECT setval(pg_get_serial_sequence(:t, 'id'), :n)"),
                    {"t": table.name, "n": top},
                )
