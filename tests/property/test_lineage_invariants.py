"""Property: any sequence of service calls keeps every parent >= the sum of its children,
and the books always agree with the ledger's facts (the whole lab's audit and the loan's).

Hypothesis drives the real services with random — often excessive — requests.
Whatever is accepted or refused, after every step: no powder has given more to
its solutions, and no solution more to its aliquots, than it held (within the
k = 2 expanded uncertainty of the weighings); a refused call wrote nothing;
and the ledger verifies with exactly one event per accepted call.
"""

from __future__ import annotations

import shutil
import tempfile
from collections.abc import Callable
from decimal import Decimal
from pathlib import Path

import pytest
from hypothesis import HealthCheck, settings
from hypothesis import strategies as st
from hypothesis.stateful import Bundle, RuleBasedStateMachine, invariant, rule
from sqlalchemy import func, select

from tests import factories as make
from tests import keys
from tests.conftest import TickingClock
from tracker.db.database import open_database
from tracker.domain.budget import COVERAGE_FACTOR, Amount, total
from tracker.domain.errors import TrackerError
from tracker.domain.models import CustodyEvent, Powder, Solution
from tracker.services.admin import setup
from tracker.services.bench import custody, drilling, solutions
from tracker.services.corrections import weighings
from tracker.services.ledger.audit import audit
from tracker.services.ledger.chain import verify
from tracker.services.ledger.loan_audit import audit_loan

_TEMPLATE: Path | None = None


def _template() -> Path:
    global _TEMPLATE
    if _TEMPLATE is None:
        _TEMPLATE = Path(tempfile.mkdtemp(prefix="tracker-prop-")) / "t.sqlite"
        db = setup.init_database(
            _TEMPLATE,
            {"code": "boss", "name": "Bea Oswald"},
            TickingClock(),
            signer=keys.signer("boss"),
        )
        setup.add_operator(db, "boss", keys.person("tech", "Teo Chandler"))
        db.close()
    return _TEMPLATE


masses_mg = st.decimals(min_value=Decimal("0.001"), max_value=Decimal("6"), places=3)
grams = st.decimals(min_value=Decimal("0.0001"), max_value=Decimal("2"), places=4)


class LabBench(RuleBasedStateMachine):
    specimens = Bundle("specimens")
    powders = Bundle("powders")
    solutions = Bundle("solutions")

    def __init__(self) -> None:
        super().__init__()
        self.folder = Path(tempfile.mkdtemp(prefix="tracker-prop-run-"))
        shutil.copyfile(_template(), self.folder / "db.sqlite")
        self.db = open_database(self.folder / "db.sqlite", clock=TickingClock())
        self.loan = make.loan(
            self.db, max_mass_per_specimen=None, max_total_mass=None, max_specimens_sampled=None
        )
        self.expected_events = self._ledger_length()

    def teardown(self) -> None:
        self.db.close()
        shutil.rmtree(self.folder, ignore_errors=True)

    def _ledger_length(self) -> int:
        with self.db.read_session() as session:
            return session.scalar(select(func.count()).select_from(CustodyEvent)) or 0

    def _attempt(self, call: Callable[[], object]) -> str | None:
        """Run a service call; count it if accepted; a refusal must leave the ledger alone.

        Answers the new item's ID where the call made one (drill, dissolve, take_aliquot).
        """
        try:
            answer = call()
        except TrackerError:
            assert self._ledger_length() == self.expected_events
            return None
        self.expected_events += 1
        made = getattr(getattr(answer, "item", None), "id", None)
        return made if isinstance(made, str) else None

    @rule(target=specimens)
    def add_specimen(self) -> str:
        spec = make.specimen(self.db, self.loan)
        self.expected_events += 2  # listed and checked in
        return spec

    @rule(target=powders, specimen=specimens, mass=masses_mg)
    def drill(self, specimen: str, mass: Decimal) -> str | None:
        return self._attempt(
            lambda: drilling.drill(
                self.db,
                "tech",
                {
                    "specimen": specimen,
                    "tissue": "enamel",
                    "tare": "1000.000 mg",
                    "gross": f"{Decimal('1000.000') + mass} mg",
                },
            )
        )

    @rule(target=solutions, powder=powders, portion=st.one_of(st.none(), masses_mg))
    def dissolve(self, powder: str | None, portion: Decimal | None) -> str | None:
        if powder is None:
            return None
        request = {
            "powder": powder,
            "acid": "HNO3",
            "vial_tare": "5.0000 g",
            "vial_gross": "6.0000 g",
        }
        if portion is not None:
            request["powder_taken"] = f"{portion} mg"
        return self._attempt(lambda: solutions.dissolve(self.db, "tech", request))

    @rule(solution=solutions, mass=grams)
    def aliquot(self, solution: str | None, mass: Decimal) -> None:
        if solution is None:
            return
        self._attempt(
            lambda: solutions.take_aliquot(
                self.db,
                "tech",
                {
                    "solution": solution,
                    "tare": "2.0000 g",
                    "gross": f"{Decimal('2.0000') + mass} g",
                },
            )
        )

    @rule(solution=solutions, value=st.integers(min_value=1, max_value=2000))
    def concentration(self, solution: str | None, value: int) -> None:
        if solution is None:
            return
        request = {"solution": solution, "element": "Ca", "value": f"{value} ug/g"}
        request["relative_uncertainty_percent"] = "1.5"
        self._attempt(lambda: solutions.record_concentration(self.db, "tech", request))

    @rule(powder=powders, mass=masses_mg)
    def correct(self, powder: str | None, mass: Decimal) -> None:
        if powder is None:
            return
        request = {
            "item": powder,
            "tare": "1000.000 mg",
            "gross": f"{Decimal('1000.000') + mass} mg",
            "reason": "re-weighed on the calibrated balance",
        }
        self._attempt(lambda: weighings.correct_weighing(self.db, "tech", request))

    @rule(powder=powders, outcome=st.sampled_from(["destroyed", "consumed"]))
    def dispose(self, powder: str | None, outcome: str) -> None:
        if powder is None:
            return
        request = {"item": powder, "outcome": outcome, "reason": "used up in a test"}
        self._attempt(lambda: custody.dispose(self.db, "tech", request))

    @invariant()
    def books_agree_with_the_ledger(self) -> None:
        """Whatever was accepted or refused, every row is what the ledger's facts say."""
        report = audit(self.db)
        assert report.ok and report.coverage.complete, report.verdict()
        assert audit_loan(self.db, self.loan).ok

    @invariant()
    def children_never_exceed_parents(self) -> None:
        with self.db.read_session() as session:
            for powder in session.scalars(select(Powder)):
                given = total(
                    Amount.of(s.powder_mass_mg, s.powder_mass_u_mg) for s in powder.solutions
                )
                gap = given - Amount.of(powder.mass_mg, powder.mass_u_mg)
                assert gap.value <= COVERAGE_FACTOR * gap.u + 1e-12, powder.public_id
            for solution in session.scalars(select(Solution)):
                given = total(Amount.of(a.mass_g, a.mass_u_g) for a in solution.aliquots)
                gap = given - Amount.of(solution.solution_mass_g, solution.solution_mass_u_g)
                assert gap.value <= COVERAGE_FACTOR * gap.u + 1e-12, solution.public_id

    @invariant()
    def ledger_is_valid_and_complete(self) -> None:
        report = verify(self.db)
        assert report.ok and report.events == self.expected_events


LabBench.TestCase.settings = settings(
    max_examples=20,
    stateful_step_count=15,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow],
)
TestLabBench = pytest.mark.slow(LabBench.TestCase)
