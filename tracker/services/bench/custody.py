"""Where things are and where they went: moves, disposals, the loan's return."""

from __future__ import annotations

from datetime import date
from decimal import Decimal
from typing import Annotated, Any

from pydantic import Field
from sqlalchemy import select
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.models import (
    Aliquot,
    ContainerStatus,
    Cut,
    Loan,
    LoanStatus,
    Location,
    Powder,
    Solution,
    Specimen,
    SpecimenStatus,
)
from tracker.domain.timing import Since, not_before
from tracker.services.core.common import (
    ANALYTICAL_BALANCE_MG,
    MICROBALANCE_MG,
    finish,
    loan_began,
    return_shipment,
    weigh,
)
from tracker.services.core.inputs import PositiveMassMg, Raw, Request, Text, parse
from tracker.services.core.lookup import get_any, get_by_id, get_loan
from tracker.services.core.uow import UnitOfWork, unit_of_work
from tracker.services.core.views import Done, ItemView, LoanView

Container = Powder | Solution | Aliquot | Cut
MOVABLE = (Specimen, Powder, Solution, Aliquot, Cut)


class Move(Request):
    item: str
    to: str
    note: Text | None = None


def move(db: Database, actor: str | None, data: Move | Raw) -> Done[ItemView]:
    """Put a specimen or a vial somewhere else; the ledger keeps both places."""
    request = parse(Move, data)
    with unit_of_work(db, actor) as uow:
        item = get_any(uow.session, "item", request.item)
        if not isinstance(item, MOVABLE):
            raise InputError(
                "item", request.item, "is not a specimen or a vial; it cannot be moved"
            )
        require_here(item)
        target = get_by_id(uow.session, Location, "to", request.to)
        if item.location_id == target.id:
            raise RuleViolation("to", target.public_id, f"{item.public_id} is already there")
        before = item.location.path if item.location else None
        item.location = target
        payload = moved_payload(before, target, request)
        return finish(uow, "item.moved", item, payload, lambda: ItemView.of(item), parent=target)


def moved_payload(before: str | None, target: Location, request: Move) -> dict[str, Any]:
    """What the ``item.moved`` event says (the bench's bulk writer uses it too)."""
    return {"from": before, "to": target.path, "to_id": target.public_id, "note": request.note}


def require_here(item: Specimen | Container) -> None:
    """Refuse to move or dispose of what is no longer in the lab."""
    if isinstance(item, Specimen):
        if item.status is not SpecimenStatus.ON_HAND:
            raise RuleViolation(
                "item", item.public_id, f"is {item.status.value.replace('_', ' ')}, not in the lab"
            )
    elif item.status not in (ContainerStatus.AVAILABLE, ContainerStatus.RETAINED):
        raise RuleViolation("item", item.public_id, f"is {item.status.value}, not in the lab")


_FINAL = {
    "returned": ContainerStatus.RETURNED,
    "destroyed": ContainerStatus.DESTROYED,
    "retained": ContainerStatus.RETAINED,
    "consumed": ContainerStatus.CONSUMED,
}


class Dispose(Request):
    item: str
    outcome: Annotated[str, Field(pattern="^(returned|destroyed|retained|consumed)$")]
    reason: Annotated[str, Field(min_length=1, max_length=4000)]
    permission: Annotated[str, Field(max_length=300)] | None = None  # lender's written consent
    # What is left in the vial, weighed by difference as it leaves (powders and solutions).
    shipment: str | None = None  # returned vials: the outgoing shipment that carries them
    residual_tare: PositiveMassMg | None = None
    residual_gross: PositiveMassMg | None = None
    readability: PositiveMassMg | None = None


def dispose(db: Database, actor: str | None, data: Dispose | Raw) -> Done[ItemView]:
    """End a vial's life in the lab: returned to the lender, destroyed, retained or used up."""
    request = parse(Dispose, data)
    with unit_of_work(db, actor) as uow:
        item = get_any(uow.session, "item", request.item)
        if not isinstance(item, Powder | Solution | Aliquot | Cut):
            raise InputError("item", request.item, "is not a powder, solution, aliquot or cut")
        require_here(item)
        outcome = final_status(request)
        residual = residual_weighing(request, item, outcome)
        shipment = _shipment(uow, request, item, outcome)
        before = item.location.path if item.location else None
        item.status = outcome
        item.location = None
        payload = disposed_payload(request, outcome, before, residual, shipment)
        action = f"{type(item).__name__.lower()}.{outcome.value}"
        return finish(uow, action, item, payload, lambda: ItemView.of(item))


def final_status(request: Dispose) -> ContainerStatus:
    """Where a disposal leaves the vial; retaining lent material needs the lender's consent."""
    outcome = _FINAL[request.outcome]
    if outcome is ContainerStatus.RETAINED and not request.permission:
        raise RuleViolation(
            "permission", None, "retaining lent material needs the lender's written permission"
        )
    return outcome


def disposed_payload(
    request: Dispose,
    outcome: ContainerStatus,
    before: str | None,
    residual: dict[str, Decimal | None] | None,
    shipment: str | None,
) -> dict[str, Any]:
    """What a disposal's event says (the bench's bulk writer uses it too)."""
    return {
        "outcome": outcome.value,
        "reason": request.reason,
        "permission": request.permission,
        "from": before,
        "residual": residual,
        "shipment": shipment,
    }


def _shipment(
    uow: UnitOfWork, request: Dispose, item: Container, outcome: ContainerStatus
) -> str | None:
    if request.shipment is None:
        return None
    if outcome is not ContainerStatus.RETURNED or not isinstance(item, Powder):
        raise InputError(
            "shipment", request.shipment, "only returned powder vials travel in a shipment here"
        )
    shipment = return_shipment(uow, request.shipment, item.specimen.loan_id)
    assert shipment is not None
    item.return_shipment_id = shipment.id
    return shipment.public_id


def residual_weighing(
    request: Dispose, item: Container, outcome: ContainerStatus
) -> dict[str, Decimal | None] | None:
    """Weigh what leaves the lab; store it on powders (mg) and solutions (g)."""
    given = (request.residual_tare, request.residual_gross)
    if all(v is None for v in given):
        return None
    if any(v is None for v in given):
        raise InputError("residual-gross", None, "give both the residual tare and gross readings")
    if outcome is ContainerStatus.CONSUMED:
        raise InputError("residual-gross", None, "a consumed vial is empty; nothing to weigh")
    if not isinstance(item, Powder | Solution):
        raise InputError(
            "item", item.public_id, "residual weighings apply to powders and solutions"
        )
    default = MICROBALANCE_MG if isinstance(item, Powder) else ANALYTICAL_BALANCE_MG
    assert request.residual_tare is not None and request.residual_gross is not None
    weighing = weigh(
        request.residual_tare,
        request.residual_gross,
        request.readability or default,
        ("residual-tare", "residual-gross"),
    )
    if isinstance(item, Powder):
        item.residual_mg, item.residual_u_mg = weighing.stored()
        return {"residual_mg": item.residual_mg, "residual_u_mg": item.residual_u_mg}
    item.residual_g, item.residual_u_g = weighing.stored(shift=-3)
    return {"residual_g": item.residual_g, "residual_u_g": item.residual_u_g}


class MarkReturned(Request):
    loan: str
    returned_on: date | None = None


def mark_loan_returned(db: Database, actor: str | None, data: MarkReturned | Raw) -> Done[LoanView]:
    """Close the material side of a loan once every specimen has gone back."""
    request = parse(MarkReturned, data)
    with unit_of_work(db, actor) as uow:
        loan = get_loan(uow.session, "loan", request.loan)
        if loan.status is not LoanStatus.OPEN:
            raise RuleViolation("loan", loan.reference, f"is already {loan.status.value}")
        on_hand = [s.public_id for s in loan.specimens if s.status is SpecimenStatus.ON_HAND]
        if on_hand:
            raise RuleViolation(
                "loan",
                loan.reference,
                f"{len(on_hand)} specimen(s) still on hand: {', '.join(on_hand[:5])}",
            )
        open_powders = uow.session.scalars(
            select(Powder)
            .join(Specimen)
            .where(Specimen.loan_id == loan.id, Powder.status == ContainerStatus.AVAILABLE)
        ).all()
        if open_powders:
            names = ", ".join(p.public_id for p in open_powders[:5])
            raise RuleViolation(
                "loan",
                loan.reference,
                f"{len(open_powders)} powder vial(s) still open: {names}; "
                "return, destroy, retain or use them up first",
            )
        returned_on = request.returned_on or uow.now.date()
        if returned_on > uow.now.date():
            raise InputError("returned-on", returned_on.isoformat(), "is in the future")
        not_before("returned-on", returned_on, _loan_returned_after(loan))
        loan.status = LoanStatus.RETURNED
        loan.returned_on = returned_on
        return finish(
            uow,
            "loan.returned",
            loan,
            {"returned_on": returned_on.isoformat()},
            lambda: LoanView.of(loan, returned_on),
            parent=loan.lender,
        )


def _loan_returned_after(loan: Loan) -> list[Since]:
    """A loan goes back after it began and after the last of its specimens went back."""
    last = max((s.returned_at for s in loan.specimens if s.returned_at), default=None)
    return [loan_began(loan), Since("the last of its specimens was returned", last)]


class CloseLoan(Request):
    loan: str
    reason: Annotated[str, Field(min_length=3, max_length=4000)]


def close_loan(db: Database, actor: str | None, data: CloseLoan | Raw) -> Done[LoanView]:
    """Close a returned loan once nothing of it is left in the lab (managers only).

    Closing says the lab's obligations are met: the material is back and residual
    solutions and aliquots have been dealt with as the terms require. After it the
    loan's terms can no longer be amended.
    """
    request = parse(CloseLoan, data)
    with unit_of_work(db, actor) as uow:
        uow.require_manager("closing a loan")
        loan = get_loan(uow.session, "loan", request.loan)
        if loan.status is LoanStatus.CLOSED:
            raise RuleViolation("loan", loan.reference, "is already closed")
        if loan.status is not LoanStatus.RETURNED:
            raise RuleViolation(
                "loan",
                loan.reference,
                "has not been returned yet; mark it returned first",
            )
        left = _material_left(uow.session, loan.id)
        if left:
            raise RuleViolation(
                "loan",
                loan.reference,
                f"{len(left)} vial(s) of its material are still in the lab: "
                f"{', '.join(left[:5])}; dispose of them as the terms require first",
            )
        loan.status = LoanStatus.CLOSED
        payload = {"reason": request.reason, "returned_on": _iso(loan.returned_on)}
        return finish(
            uow,
            "loan.closed",
            loan,
            payload,
            lambda: LoanView.of(loan, uow.now.date()),
            parent=loan.lender,
        )


def _material_left(session: Session, loan_id: int) -> list[str]:
    """Solutions and aliquots made from the loan's specimens that are still available."""
    solutions = session.scalars(
        select(Solution)
        .join(Solution.powder)
        .join(Powder.specimen)
        .where(Specimen.loan_id == loan_id, Solution.status == ContainerStatus.AVAILABLE)
    ).all()
    aliquots = session.scalars(
        select(Aliquot)
        .join(Aliquot.solution)
        .join(Solution.powder)
        .join(Powder.specimen)
        .where(Specimen.loan_id == loan_id, Aliquot.status == ContainerStatus.AVAILABLE)
    ).all()
    return [s.public_id for s in solutions] + [a.public_id for a in aliquots]


def _iso(day: date | None) -> str | None:
    return day.isoformat() if day else None
