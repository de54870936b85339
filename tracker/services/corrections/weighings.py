"""Correcting weighings: a powder's, a solution's or an aliquot's mass, a powder portion.

Each correction is refused when the corrected value would make a parent hold less
than its children (correct the children first), and a powder mass that would take
the loan over a limit needs a manager, like an override. See :mod:`correcting` for
what every correction records.
"""

from __future__ import annotations

import json
from decimal import Decimal
from typing import Annotated, Any

from pydantic import Field

from tracker.db.database import Database
from tracker.domain.allowance import check_drill
from tracker.domain.base import decimal_from_float
from tracker.domain.budget import Amount, by_difference, overdraws, total, weighed
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.models import Aliquot, ContainerStatus, Powder, Solution
from tracker.domain.precision import mass_mg
from tracker.domain.terms import terms_in_force
from tracker.domain.units import decimals_below
from tracker.services.bench.drilling import limits_of, usage_of
from tracker.services.core.common import ANALYTICAL_BALANCE_MG, MICROBALANCE_MG, weigh
from tracker.services.core.inputs import PositiveMassMg, Raw, Request, parse
from tracker.services.core.label_queue import queue_label
from tracker.services.core.lookup import get_any, get_by_id
from tracker.services.core.uow import UnitOfWork, unit_of_work
from tracker.services.core.views import Done
from tracker.services.corrections.correcting import (
    CorrectionView,
    authorise,
    entry_of,
    finish_correction,
    first_event,
    require_change,
)
from tracker.services.corrections.propagation import refresh_loaded, rereduce

Reason = Annotated[str, Field(min_length=5, max_length=4000)]


class CorrectWeighing(Request):
    item: str  # a powder, a solution (its vial) or an aliquot
    tare: PositiveMassMg
    gross: PositiveMassMg
    readability: PositiveMassMg | None = None
    reason: Reason


def correct_weighing(
    db: Database, actor: str | None, data: CorrectWeighing | Raw
) -> Done[CorrectionView]:
    """Replace a wrong tare/gross pair of a powder, a solution vial or an aliquot."""
    request = parse(CorrectWeighing, data)
    with unit_of_work(db, actor) as uow:
        item = get_any(uow.session, "item", request.item)
        if isinstance(item, Powder):
            return _powder_mass(uow, item, request)
        if isinstance(item, Solution | Aliquot):
            return _liquid_mass(uow, item, request)
        raise InputError(
            "item", request.item, "weighings are corrected on powders, solutions and aliquots"
        )


def _label_if_here(uow: UnitOfWork, item: Powder | Solution | Aliquot) -> str | None:
    """A vial whose label shows the mass gets a fresh label while it is still in the lab."""
    return queue_label(uow, item) if item.status is ContainerStatus.AVAILABLE else None


def _powder_mass(uow: UnitOfWork, powder: Powder, request: CorrectWeighing) -> Done[CorrectionView]:
    readability = request.readability or powder.readability_mg
    weighing = weigh(request.tare, request.gross, readability)
    mass, (net, net_u) = weighing.amount(), weighing.stored()
    entry = entry_of(
        uow.session,
        powder,
        "powder mass",
        "powder",
        powder.id,
        {
            "tare_mg": powder.tare_mg,
            "gross_mg": powder.gross_mg,
            "readability_mg": powder.readability_mg,
            "mass_mg": powder.mass_mg,
            "mass_u_mg": powder.mass_u_mg,
        },
        (powder.drilled_by, _first_seq(uow, powder)),
    )
    authorise(uow, entry)
    value = {
        "tare_mg": request.tare,
        "gross_mg": request.gross,
        "readability_mg": readability,
        "mass_mg": net,
        "mass_u_mg": net_u,
    }
    require_change(entry, value, "gross", f"{request.gross} mg")
    taken = [weighed(s.powder_mass_mg, s.powder_mass_u_mg) for s in powder.solutions]
    _refuse_overdraw(
        "gross",
        f"{request.gross} mg",
        by_difference(net, readability),
        taken,
        f"already dissolved from {powder.public_id}",
        [s.public_id for s in powder.solutions],
    )
    limits = _limits_passed(uow, powder, mass)
    if limits:
        uow.require_manager("a correction that takes the loan over a limit")
        powder.override_reason = powder.override_reason or f"correction: {request.reason}"
    powder.tare_mg, powder.gross_mg = value["tare_mg"], value["gross_mg"]
    powder.readability_mg, powder.mass_mg, powder.mass_u_mg = readability, net, net_u
    effects = {"limits": limits, "label": _label_if_here(uow, powder)}
    return finish_correction(uow, "powder.corrected", entry, (value, request.reason), effects)


def _limits_passed(uow: UnitOfWork, powder: Powder, mass: Amount) -> list[str]:
    """The loan's mass limits the corrected powder would exceed (with the others as they are)."""
    usage = usage_of(uow.session, powder.specimen)
    without = Amount.of(-powder.mass_mg, powder.mass_u_mg)
    usage = type(usage)(
        usage.loan_drilled + without,
        usage.specimen_drilled + without,
        usage.sampled_specimens,
        usage.specimen_already_sampled,
    )
    terms = terms_in_force(powder.specimen.loan.terms, powder.drilled_at.date())
    found = check_drill(limits_of(terms), usage, powder.tissue, mass, powder.drilled_at.date())
    return [v.message for v in found if v.limit in ("per-specimen limit", "loan total limit")]


def _liquid_mass(
    uow: UnitOfWork, item: Solution | Aliquot, request: CorrectWeighing
) -> Done[CorrectionView]:
    readability = request.readability or _recorded_readability(uow, item)
    weighing = weigh(request.tare, request.gross, readability)
    grams, stored = weighing.amount(scale=1e-3), weighing.stored(shift=-3)
    if isinstance(item, Solution):
        old, old_u, author = item.solution_mass_g, item.solution_mass_u_g, item.dissolved_by
        parts = [weighed(a.mass_g, a.mass_u_g) for a in item.aliquots]
        if overdraws(grams, total(parts)):
            raise RuleViolation(
                "gross",
                f"{request.gross} mg",
                f"gives {grams.value:.5f} g, less than the {total(parts).value:.5f} g already "
                f"aliquoted ({', '.join(a.public_id for a in item.aliquots)}); "
                "correct those first",
            )
    else:
        old, old_u, author = item.mass_g, item.mass_u_g, item.taken_by
        solution = item.solution
        whole = weighed(solution.solution_mass_g, solution.solution_mass_u_g)
        others = [weighed(a.mass_g, a.mass_u_g) for a in solution.aliquots if a is not item]
        if overdraws(whole - total(others), grams):
            raise RuleViolation(
                "gross",
                f"{request.gross} mg",
                f"gives {grams.value:.5f} g, more than remains of {solution.public_id}",
            )
    kind = type(item).__name__.lower()
    entry = entry_of(
        uow.session,
        item,
        f"{kind} mass",
        kind,
        item.id,
        {"mass_g": old, "mass_u_g": old_u},
        (author, _first_seq(uow, item)),
    )
    authorise(uow, entry)
    value = {"mass_g": stored[0], "mass_u_g": stored[1]}
    require_change(entry, value, "gross", f"{request.gross} mg")
    effects: dict[str, Any] = {"label": _label_if_here(uow, item)}
    if isinstance(item, Solution):
        item.solution_mass_g, item.solution_mass_u_g = stored
    else:
        item.mass_g, item.mass_u_g = stored
        changes, batches = refresh_loaded([item])
        effects |= {"loaded": changes, "sessions_reduced": rereduce(uow, batches)}
    return finish_correction(uow, f"{kind}.corrected", entry, (value, request.reason), effects)


def _refuse_overdraw(
    field: str, shown: str, parent: Amount, children: list[Amount], what: str, ids: list[str]
) -> None:
    if overdraws(parent, total(children)):
        raise RuleViolation(
            field,
            shown,
            f"gives {mass_mg(parent.value)}, less than the "
            f"{mass_mg(total(children).value)} {what} ({', '.join(ids)}); "
            "correct those first",
        )


def _recorded_readability(uow: UnitOfWork, item: Solution | Aliquot) -> Decimal:
    """The readability of the balance the item was weighed on, as the event that made it
    states it: a correction reads the same balance unless told otherwise (a vial weighed
    to 0.01 mg is not re-weighed to the 0.1 mg default)."""
    event = first_event(uow.session, item.public_id)
    stated = json.loads(event.payload).get("readability_mg") if event is not None else None
    return Decimal(str(stated)) if stated is not None else ANALYTICAL_BALANCE_MG


def _first_seq(uow: UnitOfWork, item: Powder | Solution | Aliquot) -> int | None:
    event = first_event(uow.session, item.public_id)
    return event.seq if event else None


class CorrectPortion(Request):
    solution: str
    powder_taken: PositiveMassMg
    readability: PositiveMassMg = MICROBALANCE_MG
    reason: Reason


def correct_powder_taken(
    db: Database, actor: str | None, data: CorrectPortion | Raw
) -> Done[CorrectionView]:
    """Replace the recorded mass of powder that went into a solution."""
    request = parse(CorrectPortion, data)
    if decimals_below(request.powder_taken, request.readability):
        raise InputError(
            "powder-taken",
            f"{request.powder_taken} mg",
            f"has more decimals than the balance reads ({request.readability} mg)",
        )
    with unit_of_work(db, actor) as uow:
        solution = get_by_id(uow.session, Solution, "solution", request.solution)
        taken = by_difference(request.powder_taken, request.readability)
        taken_u = decimal_from_float(taken.u)
        powder = solution.powder
        others = [s for s in powder.solutions if s is not solution]
        portions = [weighed(s.powder_mass_mg, s.powder_mass_u_mg) for s in others] + [taken]
        _refuse_overdraw(
            "powder-taken",
            f"{request.powder_taken} mg",
            by_difference(powder.mass_mg, powder.readability_mg),
            portions,
            f"taken from {powder.public_id} with the other solutions",
            [s.public_id for s in others] or ["none"],
        )
        entry = entry_of(
            uow.session,
            solution,
            "powder taken",
            "solution",
            solution.id,
            {
                "powder_mass_mg": solution.powder_mass_mg,
                "powder_mass_u_mg": solution.powder_mass_u_mg,
            },
            (solution.dissolved_by, _first_seq(uow, solution)),
        )
        authorise(uow, entry)
        value = {"powder_mass_mg": request.powder_taken, "powder_mass_u_mg": taken_u}
        require_change(entry, value, "powder-taken", f"{request.powder_taken} mg")
        solution.powder_mass_mg, solution.powder_mass_u_mg = request.powder_taken, taken_u
        change = (value, request.reason)
        return finish_correction(uow, "solution.corrected", entry, change, {})
