"""Correcting measured values: a solution's element concentration, a cut's recovery.

A corrected concentration is a new concentration row that supersedes the one in
force (same measurement time, so the correction takes its place and a later
measurement still wins). Both corrections recompute what was stored from the old
value — the element each aliquot of the solution loaded on its column, and the
reduced results of sessions that measured the batch — inside the same unit of work.
"""

from __future__ import annotations

from decimal import Decimal
from typing import Annotated, Any

from pydantic import Field, model_validator
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.errors import RuleViolation
from tracker.domain.models import Concentration, Cut, Solution
from tracker.services.bench.columns import recovered_in_ug
from tracker.services.bench.plausibility import require_plausible
from tracker.services.bench.solutions import ConcentrationValue, latest_concentration
from tracker.services.core.inputs import FieldProblem, MassMg, Raw, Request, parse
from tracker.services.core.lookup import get_by_id
from tracker.services.core.uow import unit_of_work
from tracker.services.core.views import Done
from tracker.services.corrections.correcting import (
    CorrectionView,
    Entry,
    authorise,
    concentration_event,
    entry_of,
    finish_correction,
    first_event,
    latest_correction,
    require_change,
)
from tracker.services.corrections.propagation import refresh_loaded, rereduce

Reason = Annotated[str, Field(min_length=5, max_length=4000)]


class CorrectConcentration(ConcentrationValue):
    reason: Reason


def correct_concentration(
    db: Database, actor: str | None, data: CorrectConcentration | Raw
) -> Done[CorrectionView]:
    """Replace the concentration in force for one element of a solution."""
    request = parse(CorrectConcentration, data)
    with unit_of_work(db, actor) as uow:
        solution = get_by_id(uow.session, Solution, "solution", request.solution)
        current = latest_concentration(solution, request.element)
        if current is None:
            raise RuleViolation(
                "element",
                request.element,
                f"no concentration of it is recorded for {solution.public_id}; record one first",
            )
        entry = _concentration_entry(uow.session, solution, current)
        authorise(uow, entry)
        confirmed = require_plausible(
            uow.session,
            solution,
            current.element,
            (request.value, request.standard_uncertainty()),
            request.confirm_implausible,
        )
        row = Concentration(
            solution=solution,
            element=current.element,
            value_ug_per_g=request.value,
            u_ug_per_g=request.standard_uncertainty(),
            method=request.method or current.method,
            measured_at=current.measured_at,
            recorded_by=uow.operator.code,
            supersedes_id=current.id,
            created_at=uow.now,
        )
        probe = {"value_ug_per_g": row.value_ug_per_g, "u_ug_per_g": row.u_ug_per_g}
        require_change(entry, probe, "value", f"{request.value} ug/g")
        uow.session.add(row)
        uow.session.flush()
        value: dict[str, Any] = {"row": row.id, **probe, "method": row.method}
        if confirmed is not None:
            value["confirmed_implausible"] = confirmed
        changes, batches = refresh_loaded(solution.aliquots)
        effects = {"loaded": changes, "sessions_reduced": rereduce(uow, batches)}
        return finish_correction(
            uow, "concentration.corrected", entry, (value, request.reason), effects
        )


def _concentration_entry(session: Session, solution: Solution, current: Concentration) -> Entry:
    """The row in force, and the correction that made it (none when a later measurement did)."""
    quantity = f"concentration {current.element}"
    previous = latest_correction(session, solution.public_id, quantity)
    if previous is None or previous.value.get("row") != current.id:
        previous = None
    values = {
        "row": current.id,
        "value_ug_per_g": current.value_ug_per_g,
        "u_ug_per_g": current.u_ug_per_g,
        "method": current.method,
    }
    seq = previous.event_seq if previous else concentration_event(session, current)
    return Entry(
        solution, quantity, "concentration", current.id, values, current.recorded_by, seq, previous
    )


class CorrectRecovery(Request):
    cut: str
    recovered: MassMg  # element recovered in the cut, with unit ("9.87 ug")
    uncertainty: MassMg | None = None
    relative_uncertainty_percent: Annotated[float, Field(gt=0, lt=100)] | None = None
    reason: Reason

    @model_validator(mode="after")
    def _consistent(self) -> CorrectRecovery:
        if self.recovered < 0:
            raise FieldProblem("recovered", f"{self.recovered} mg", "must not be negative")
        if self.uncertainty is not None and self.relative_uncertainty_percent is not None:
            raise FieldProblem(
                "uncertainty", None, "give an uncertainty or a relative one, not both"
            )
        return self

    def amounts_ug(self) -> tuple[Decimal, Decimal]:
        return recovered_in_ug(self.recovered, self.uncertainty, self.relative_uncertainty_percent)


def correct_recovery(
    db: Database, actor: str | None, data: CorrectRecovery | Raw
) -> Done[CorrectionView]:
    """Replace the element recovered in a cut; yields, blanks and results follow."""
    request = parse(CorrectRecovery, data)
    with unit_of_work(db, actor) as uow:
        cut = get_by_id(uow.session, Cut, "cut", request.cut)
        made = first_event(uow.session, cut.public_id)
        entry = entry_of(
            uow.session,
            cut,
            "cut recovery",
            "cut",
            cut.id,
            {"recovered_ug": cut.recovered_ug, "recovered_u_ug": cut.recovered_u_ug},
            (made.operator if made else cut.position.batch.operator, made.seq if made else None),
        )
        authorise(uow, entry)
        recovered, u = request.amounts_ug()
        value = {"recovered_ug": recovered, "recovered_u_ug": u}
        require_change(entry, value, "recovered", f"{request.recovered} mg")
        cut.recovered_ug, cut.recovered_u_ug = recovered, u
        effects = {"sessions_reduced": rereduce(uow, {cut.position.batch_id})}
        return finish_correction(uow, "cut.corrected", entry, (value, request.reason), effects)
