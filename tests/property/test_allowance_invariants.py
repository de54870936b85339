"""Properties of the allowance and closure rules under random sequences of real service calls.

1. Whatever drills are attempted — by technicians or, with a written reason, by a
   manager — the loan's total, each specimen's mass and the number of specimens
   sampled stay within the terms unless an override was recorded.
2. A returned powder is flagged "unaccounted material" exactly when its books miss
   by more than measurement explains: |gap| > max(k·u, rounding bound), with u from
   GUM (JCGM 100:2008 F.2.2.1, d/√6 per weighing by difference) and the bound the
   sum of the three weighings' readabilities (common practice), recomputed here.
"""

from __future__ import annotations

import math
import shutil
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager, suppress
from decimal import Decimal
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from sqlalchemy import select

from tests import factories as make
from tests.conftest import TickingClock, seed
from tracker.db.database import Database, open_database
from tracker.domain.errors import TrackerError
from tracker.domain.models import Powder
from tracker.services.bench import custody, drilling
from tracker.services.read.reconcile import reconcile

_TEMPLATE: Path | None = None
SETTINGS = settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@contextmanager
def fresh_database() -> Iterator[Database]:
    global _TEMPLATE
    if _TEMPLATE is None:
        _TEMPLATE = Path(tempfile.mkdtemp(prefix="tracker-allow-")) / "t.sqlite"
        seed(str(_TEMPLATE))
    folder = Path(tempfile.mkdtemp(prefix="tracker-allow-run-"))
    shutil.copyfile(_TEMPLATE, folder / "db.sqlite")
    db = open_database(folder / "db.sqlite", clock=TickingClock())
    try:
        yield db
    finally:
        db.close()
        shutil.rmtree(folder, ignore_errors=True)


attempts = st.lists(
    st.tuples(
        st.integers(0, 3), st.decimals(Decimal("0.001"), Decimal("2.5"), places=3), st.booleans()
    ),
    min_size=1,
    max_size=12,
)


@SETTINGS
@given(attempts)
def test_limits_hold_unless_overridden(sequence: list[tuple[int, Decimal, bool]]) -> None:
    with fresh_database() as db:
        loan = make.loan(
            db, max_mass_per_specimen="3 mg", max_total_mass="6 mg", max_specimens_sampled=2
        )
        specimens = [make.specimen(db, loan) for _ in range(4)]
        for index, mass, override in sequence:
            request = {
                "specimen": specimens[index],
                "tissue": "enamel",
                "tare": "1000.000 mg",
                "gross": f"{Decimal('1000.000') + mass} mg",
            }
            if override:
                request["override_reason"] = "agreed with the lender in writing"
            with suppress(TrackerError):  # refusals are part of the sequence
                drilling.drill(db, "boss" if override else "tech", request)
        with db.read_session() as session:
            powders = session.scalars(select(Powder)).all()
            overridden = any(p.override_reason for p in powders)
            per_specimen: dict[int, Decimal] = {}
            for p in powders:  # exact masses: exact sums
                held = per_specimen.get(p.specimen_id, Decimal(0))
                per_specimen[p.specimen_id] = held + p.mass_mg
        if not overridden:
            assert sum(per_specimen.values()) <= 6
            assert all(total <= 3 for total in per_specimen.values())
            assert len(per_specimen) <= 2
        flagged = "override used" in reconcile(db, loan)[0].flags
        assert flagged == overridden


D = 0.001  # mg, the microbalance readability used for all three weighings below


@SETTINGS
@given(
    drilled=st.decimals(Decimal("0.500"), Decimal("3.000"), places=3),
    share=st.decimals(Decimal("0.1"), Decimal("0.9"), places=2),
    miss=st.one_of(  # the edges of the tolerance, then anything up to 0.2 mg either way
        st.sampled_from([Decimal(m) for m in ("0", "0.001", "-0.002", "0.002", "0.004", "0.2")]),
        st.decimals(Decimal("-0.200"), Decimal("0.200"), places=3),
    ),
)
def test_unaccounted_flag_exactly_beyond_tolerance(
    drilled: Decimal, share: Decimal, miss: Decimal
) -> None:
    taken = (drilled * share).quantize(Decimal("0.001"))
    residual = drilled - taken - miss
    if residual <= 0:
        return
    with fresh_database() as db:
        loan = make.loan(db, max_mass_per_specimen=None, max_total_mass=None)
        powder = make.powder(db, make.specimen(db, loan), mg=str(drilled))
        make.solution(db, powder, taken=f"{taken} mg")
        custody.dispose(
            db,
            "boss",
            {
                "item": powder,
                "outcome": "returned",
                "reason": "unused",
                "residual_tare": "500.000 mg",
                "residual_gross": f"{Decimal('500.000') + residual} mg",
            },
        )
        flagged = "unaccounted material" in reconcile(db, loan)[0].flags
    gap = float(drilled - taken - residual)
    u = math.sqrt(3) * D / math.sqrt(6)  # three masses by difference, in quadrature
    tolerance = max(2 * u, 3 * D)  # k = 2, or the three weighings' rounding bound
    if not math.isclose(abs(gap), tolerance, rel_tol=1e-6):
        assert flagged == (abs(gap) > tolerance)
