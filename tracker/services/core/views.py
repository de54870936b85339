"""What services give back: plain pydantic views, safe to print or dump as JSON.

Views are built inside the unit of work from ORM rows, so entry points never
touch a session or a lazy relationship.
"""

from __future__ import annotations

import json
from datetime import date, datetime
from typing import Any, Generic, TypeVar

from pydantic import BaseModel, ConfigDict

from tracker.domain.actions import action_words
from tracker.domain.models import (
    Aliquot,
    Concentration,
    Document,
    Lender,
    Loan,
    LoanTerms,
    Location,
    Operator,
    Powder,
    Solution,
    Specimen,
)
from tracker.domain.terms import terms_in_force


class View(BaseModel):
    model_config = ConfigDict(frozen=True, defer_build=True)


V = TypeVar("V", bound=BaseModel)


class OperatorView(View):
    id: str
    code: str
    name: str
    role: str
    active: bool
    login: str | None = None  # the PostgreSQL login bound to them (shared databases)

    @classmethod
    def of(cls, row: Operator) -> OperatorView:
        return cls(
            id=row.public_id,
            code=row.code,
            name=row.name,
            role=row.role.value,
            active=row.active,
            login=row.login,
        )


class LocationView(View):
    id: str
    kind: str
    name: str
    path: str

    @classmethod
    def of(cls, row: Location) -> LocationView:
        return cls(id=row.public_id, kind=row.kind.value, name=row.name, path=row.path)


class LenderView(View):
    id: str
    name: str
    institution_code: str | None
    contact_name: str | None
    contact_email: str | None

    @classmethod
    def of(cls, row: Lender) -> LenderView:
        return cls(
            id=row.public_id,
            name=row.name,
            institution_code=row.institution_code,
            contact_name=row.contact_name,
            contact_email=row.contact_email,
        )


class TermsView(View):
    version: int
    kind: str
    effective_from: date
    permitted_tissues: list[str]
    max_mass_per_specimen_mg: float | None
    max_total_mass_mg: float | None
    max_specimens_sampled: int | None
    due_on: date
    return_specimens: bool
    powder_disposition: str
    solution_disposition: str
    report_data: bool
    acknowledgement: bool
    notes: str | None

    @classmethod
    def of(cls, row: LoanTerms) -> TermsView:
        return cls(
            version=row.version,
            kind=row.kind.value,
            effective_from=row.effective_from,
            permitted_tissues=list(row.permitted_tissues),
            max_mass_per_specimen_mg=row.max_mass_per_specimen_mg,
            max_total_mass_mg=row.max_total_mass_mg,
            max_specimens_sampled=row.max_specimens_sampled,
            due_on=row.due_on,
            return_specimens=row.return_specimens,
            powder_disposition=row.powder_disposition.value,
            solution_disposition=row.solution_disposition.value,
            report_data=row.report_data,
            acknowledgement=row.acknowledgement,
            notes=row.notes,
        )


class LoanView(View):
    id: str
    reference: str
    lender: str
    title: str
    borrower: str
    status: str
    received_on: date | None
    returned_on: date | None
    terms: TermsView  # the version in force on the day asked about
    versions: int

    @classmethod
    def of(cls, row: Loan, on: date) -> LoanView:
        return cls(
            id=row.public_id,
            reference=row.reference,
            lender=row.lender.name,
            title=row.title,
            borrower=row.borrower,
            status=row.status.value,
            received_on=row.received_on,
            returned_on=row.returned_on,
            terms=TermsView.of(terms_in_force(row.terms, on)),
            versions=len(row.terms),
        )


class SpecimenView(View):
    id: str
    loan: str
    catalog_number: str
    scientific_name: str | None
    skeletal_element: str | None
    status: str
    location: str | None
    condition_in: str | None
    condition_out: str | None

    @classmethod
    def of(cls, row: Specimen) -> SpecimenView:
        return cls(
            id=row.public_id,
            loan=row.loan.reference,
            catalog_number=row.catalog_number,
            scientific_name=row.scientific_name,
            skeletal_element=row.skeletal_element,
            status=row.status.value,
            location=row.location.path if row.location else None,
            condition_in=row.condition_in,
            condition_out=row.condition_out,
        )


class PowderView(View):
    id: str
    specimen: str
    tissue: str
    site: str | None
    mass_mg: float
    mass_u_mg: float
    tare_mg: float
    gross_mg: float
    readability_mg: float
    drilled_at: datetime
    status: str
    location: str | None

    @classmethod
    def of(cls, row: Powder) -> PowderView:
        return cls(
            id=row.public_id,
            specimen=row.specimen.public_id,
            tissue=row.tissue,
            site=row.site,
            mass_mg=row.mass_mg,
            mass_u_mg=row.mass_u_mg,
            tare_mg=row.tare_mg,
            gross_mg=row.gross_mg,
            readability_mg=row.readability_mg,
            drilled_at=row.drilled_at,
            status=row.status.value,
            location=row.location.path if row.location else None,
        )


class SolutionView(View):
    id: str
    powder: str
    powder_mass_mg: float
    powder_mass_u_mg: float
    acid: str
    solution_mass_g: float
    solution_mass_u_g: float
    status: str

    @classmethod
    def of(cls, row: Solution) -> SolutionView:
        return cls(
            id=row.public_id,
            powder=row.powder.public_id,
            powder_mass_mg=row.powder_mass_mg,
            powder_mass_u_mg=row.powder_mass_u_mg,
            acid=row.acid,
            solution_mass_g=row.solution_mass_g,
            solution_mass_u_g=row.solution_mass_u_g,
            status=row.status.value,
        )


class ConcentrationView(View):
    solution: str
    element: str
    value_ug_per_g: float
    u_ug_per_g: float
    method: str | None
    element_ug: float
    element_u_ug: float

    @classmethod
    def of(cls, row: Concentration, element_ug: float, element_u_ug: float) -> ConcentrationView:
        return cls(
            solution=row.solution.public_id,
            element=row.element,
            value_ug_per_g=row.value_ug_per_g,
            u_ug_per_g=row.u_ug_per_g,
            method=row.method,
            element_ug=element_ug,
            element_u_ug=element_u_ug,
        )


class AliquotView(View):
    id: str
    solution: str
    mass_g: float
    mass_u_g: float
    purpose: str
    element: str | None
    element_ug: float | None
    element_u_ug: float | None

    @classmethod
    def of(cls, row: Aliquot, element: tuple[str, float, float] | None) -> AliquotView:
        symbol, ug, u_ug = element if element else (None, None, None)
        return cls(
            id=row.public_id,
            solution=row.solution.public_id,
            mass_g=row.mass_g,
            mass_u_g=row.mass_u_g,
            purpose=row.purpose.value,
            element=symbol,
            element_ug=ug,
            element_u_ug=u_ug,
        )


class EventView(View):
    """An event as lists and histories show it: its payload without the facts of its rows
    (``ledger export`` and the audit have them), and whether it states them."""

    seq: int
    at: datetime
    operator: str
    action: str  # the ledger's name for it, as hashed and signed
    said: str  # the action in words, for people
    object: str
    parent: str
    payload: dict[str, Any]
    hash: str
    # where it came from and who signed it (empty and None for events before signing)
    os_user: str = ""
    host: str = ""
    db_user: str = ""
    key_id: str | None = None
    states_facts: bool = False

    @classmethod
    def of(cls, row: Any) -> EventView:
        """From a row of ``chain.listed`` (the payload's facts left out by the database)."""
        return cls(
            seq=row.seq,
            at=row.at,
            operator=row.operator,
            action=row.action,
            said=action_words(row.action),
            object=row.object_ref,
            parent=row.parent_ref,
            payload=json.loads(row.payload),
            hash=row.hash,
            os_user=row.os_user,
            host=row.host,
            db_user=row.db_user,
            key_id=row.key_id,
            states_facts=bool(row.states_facts),
        )


class ItemView(View):
    """Any physical thing with a label: what it is, its state, where it is."""

    id: str
    kind: str
    status: str
    location: str | None

    @classmethod
    def of(cls, row: Any) -> ItemView:
        location = row.location.path if getattr(row, "location", None) else None
        return cls(
            id=row.public_id,
            kind=type(row).__name__.lower(),
            status=row.status.value,
            location=location,
        )


class DocumentView(View):
    id: str
    sha256: str
    filename: str
    size_bytes: int
    role: str | None = None

    @classmethod
    def of(cls, row: Document, role: str | None = None) -> DocumentView:
        return cls(
            id=row.public_id,
            sha256=row.sha256,
            filename=row.filename,
            size_bytes=row.size_bytes,
            role=role,
        )


class Done(View, Generic[V]):
    """The answer of a service that changed something: what, and the event that records it."""

    item: V
    event_seq: int
    event_hash: str
