"""Specimens: listed on a loan, checked in when they arrive, moved, returned."""

from __future__ import annotations

from typing import Annotated, Any

from pydantic import Field, model_validator
from sqlalchemy import select
from sqlalchemy.orm import selectinload

from tracker.db.database import Database
from tracker.domain.errors import RuleViolation
from tracker.domain.models import Loan, LoanStatus, Location, Shipment, Specimen, SpecimenStatus
from tracker.services.core.common import (
    action_time,
    finish,
    loan_began,
    optional_location,
    require_on_hand,
    return_shipment,
    returned_after,
)
from tracker.services.core.inputs import (
    FREE_TEXT,
    AwareDatetime,
    FieldProblem,
    Name,
    Raw,
    Request,
    Text,
    parse,
)
from tracker.services.core.label_queue import queue_label
from tracker.services.core.lookup import get_by_id, get_loan
from tracker.services.core.uow import Acting, unit_of_work
from tracker.services.core.views import Done, SpecimenView

Short = Annotated[str, Field(max_length=120)]


class NewSpecimen(Request):
    loan: str
    catalog_number: Annotated[str, Field(min_length=1, max_length=80)]
    institution_code: Annotated[str, Field(max_length=40)] | None = None
    collection_code: Annotated[str, Field(max_length=40)] | None = None
    scientific_name: Name | None = None
    skeletal_element: Short | None = None
    locality: Annotated[str, Field(max_length=300)] | None = None
    formation: Short | None = None
    earliest_epoch: Short | None = None
    latest_epoch: Short | None = None
    age_max_ma: Annotated[float, Field(ge=0, le=4600)] | None = None
    age_min_ma: Annotated[float, Field(ge=0, le=4600)] | None = None
    # Darwin Core terms kept as they came (keys one line; values may be remarks on lines)
    extra: Annotated[dict[str, Any], FREE_TEXT] = Field(default_factory=dict)

    @model_validator(mode="after")
    def _ages_ordered(self) -> NewSpecimen:
        oldest, youngest = self.age_max_ma, self.age_min_ma
        if oldest is not None and youngest is not None and youngest > oldest:
            raise FieldProblem("age-min-ma", youngest, f"is older than the oldest age {oldest} Ma")
        return self


def listed_specimen(who: Acting, loan: Loan, fields: dict[str, Any]) -> Specimen:
    """A specimen the lender listed, not yet here: the service's row, and the bulk writer's."""
    return Specimen(loan=loan, loan_id=loan.id, **fields, created_at=who.now)


def add_specimen(db: Database, actor: str | None, data: NewSpecimen | Raw) -> Done[SpecimenView]:
    """List a specimen on a loan (status: expected until it is checked in)."""
    request = parse(NewSpecimen, data)
    with unit_of_work(db, actor) as uow:
        loan = get_loan(uow.session, "loan", request.loan)
        if loan.status is not LoanStatus.OPEN:
            raise RuleViolation(
                "loan", loan.reference, f"is {loan.status.value}; it takes no new specimens"
            )
        clash = select(Specimen.id).where(
            Specimen.loan_id == loan.id, Specimen.catalog_number == request.catalog_number
        )
        if uow.session.scalar(clash) is not None:
            raise RuleViolation("catalog-number", request.catalog_number, "is already on this loan")
        fields = request.model_dump(exclude={"loan"})
        specimen = listed_specimen(uow, loan, fields)
        uow.session.add(specimen)
        return finish(
            uow,
            "specimen.added",
            specimen,
            added_payload(loan, fields),
            lambda: SpecimenView.of(specimen),
            parent=loan,
        )


def added_payload(loan: Loan, fields: dict[str, Any]) -> dict[str, Any]:
    """What the ``specimen.added`` event says (the bench's bulk writer uses it too)."""
    return {"loan": loan.public_id, **fields}


class CheckIn(Request):
    specimen: str
    condition: Annotated[str, Field(min_length=1, max_length=4000)]
    location: str | None = None
    received_at: AwareDatetime | None = None


def check_in(db: Database, actor: str | None, data: CheckIn | Raw) -> Done[SpecimenView]:
    """Receive a listed specimen: note its condition and where it is put."""
    request = parse(CheckIn, data)
    with unit_of_work(db, actor) as uow:
        specimen = get_by_id(uow.session, Specimen, "specimen", request.specimen)
        if specimen.status is not SpecimenStatus.EXPECTED:
            raise RuleViolation(
                "specimen",
                specimen.public_id,
                f"is already {specimen.status.value.replace('_', ' ')}; it cannot be checked in "
                "twice",
            )
        if specimen.loan.status is not LoanStatus.OPEN:
            raise RuleViolation(
                "specimen", specimen.public_id, f"its loan is {specimen.loan.status.value}"
            )
        location = optional_location(uow, "location", request.location)
        specimen.received_at = action_time(
            uow, request.received_at, "received-at", [loan_began(specimen.loan)], books=specimen
        )
        specimen.status = SpecimenStatus.ON_HAND
        specimen.condition_in = request.condition
        specimen.location = location
        payload = checked_in_payload(specimen, request, location, queue_label(uow, specimen))
        return finish(
            uow,
            "specimen.checked_in",
            specimen,
            payload,
            lambda: SpecimenView.of(specimen),
            parent=specimen.loan,
        )


def checked_in_payload(
    specimen: Specimen, request: CheckIn, location: Location | None, label: str
) -> dict[str, Any]:
    """What the ``specimen.checked_in`` event says (the bench's bulk writer uses it too)."""
    assert specimen.received_at is not None
    return {
        "condition": request.condition,
        "location": location.public_id if location else None,
        "location_path": location.path if location else None,
        "received_at": specimen.received_at.isoformat(),
        "label": label,
    }


class ReturnSpecimen(Request):
    specimen: str
    condition: Annotated[str, Field(min_length=1, max_length=4000)]
    returned_at: AwareDatetime | None = None
    note: Text | None = None
    shipment: str | None = None  # the outgoing shipment (SH-...) that carries it back


def return_specimen(
    db: Database, actor: str | None, data: ReturnSpecimen | Raw
) -> Done[SpecimenView]:
    """Send a specimen back to its lender, noting its condition at return."""
    request = parse(ReturnSpecimen, data)
    with unit_of_work(db, actor) as uow:
        specimen = get_by_id(uow.session, Specimen, "specimen", request.specimen)
        require_on_hand(specimen)
        shipment = return_shipment(uow, request.shipment, specimen.loan_id)
        specimen.return_shipment_id = shipment.id if shipment else None
        specimen.returned_at = action_time(
            uow, request.returned_at, "returned-at", returned_after(specimen), books=specimen
        )
        specimen.status = SpecimenStatus.RETURNED
        specimen.condition_out = request.condition
        previous = specimen.location.path if specimen.location else None
        specimen.location = None
        payload = returned_payload(specimen, request, previous, shipment)
        return finish(
            uow,
            "specimen.returned",
            specimen,
            payload,
            lambda: SpecimenView.of(specimen),
            parent=specimen.loan,
        )


def returned_payload(
    specimen: Specimen, request: ReturnSpecimen, previous: str | None, shipment: Shipment | None
) -> dict[str, Any]:
    """What the ``specimen.returned`` event says (the bench's bulk writer uses it too)."""
    assert specimen.returned_at is not None
    return {
        "condition": request.condition,
        "note": request.note,
        "from": previous,
        "returned_at": specimen.returned_at.isoformat(),
        "shipment": shipment.public_id if shipment else None,
    }


def list_specimens(db: Database, loan: str | None = None) -> list[SpecimenView]:
    with db.read_session() as session:
        query = (
            select(Specimen)
            .options(selectinload(Specimen.loan), selectinload(Specimen.location))
            .order_by(Specimen.id)
        )
        if loan:
            query = query.where(Specimen.loan_id == get_loan(session, "loan", loan).id)
        return [SpecimenView.of(s) for s in session.scalars(query)]
