"""The return report: the account a lender receives when the loan goes home.

Built from the same reads the rest of tracker uses — reconciliation for the totals,
the lineage for each specimen's powders, solutions and results, the ledger for
dispositions, permissions and the custody timeline — so the report can never
disagree with `tracker reconcile`. Rendering (PDF, CSV) happens in tracker.output;
generating a report is recorded as one custody event naming the files' SHA-256.
"""

from __future__ import annotations

import json
from collections import defaultdict
from typing import Any

from sqlalchemy import func, or_, select
from sqlalchemy.orm import Session, selectinload

from tracker.db.database import Database
from tracker.domain.actions import action_words
from tracker.domain.ids import Kind, format_id
from tracker.domain.loan_flags import BACKDATED
from tracker.domain.models import (
    BackdatedEntry,
    CustodyEvent,
    Loan,
    LoanDocument,
    Powder,
    Shipment,
    Solution,
    Specimen,
    SpecimenPhoto,
)
from tracker.domain.terms import terms_in_force
from tracker.services.bench.solutions import powder_remaining
from tracker.services.core.common import finish
from tracker.services.core.inputs import Raw, Request, parse
from tracker.services.core.lookup import get_loan
from tracker.services.core.uow import unit_of_work
from tracker.services.core.views import DocumentView, Done, TermsView, View
from tracker.services.instrument.results import results
from tracker.services.ledger.loan_audit import audit_loan
from tracker.services.read.item_facts import recoveries_of
from tracker.services.read.reconcile import reconcile
from tracker.services.read.report_views import (
    FORMAT,
    BackdatedLine,
    LedgerHead,
    PhotoEntry,
    PowderLine,
    ResultEntry,
    ReturnReport,
    SolutionLine,
    SpecimenEntry,
    TimelineEntry,
    verification_statement,
)

_OUTCOMES = ("returned", "destroyed", "retained", "consumed")


def build_return_report(
    db: Database, loan_ref: str, *, despite_discrepancies: bool = False
) -> ReturnReport:
    """Everything the lender's account contains, read in one consistent pass.

    Refused when the loan's books differ from the ledger (``audit_loan``), unless written
    despite the discrepancies: then the report lists every one of them.
    """
    now = db.clock()
    checked = audit_loan(db, loan_ref)
    discrepancies = checked.vouch("loan", loan_ref, despite=despite_discrepancies)
    head = checked.chain
    (totals,) = reconcile(db, loan_ref)
    by_specimen: dict[str, list[ResultEntry]] = defaultdict(list)
    for r in results(db, loan_ref):
        by_specimen[r.specimen].append(
            ResultEntry(
                ratio=r.ratio,
                kind=r.kind,
                value=r.value,
                two_sd=r.two_sd,
                uncertainty=r.uncertainty,
                n=r.n,
                scale=r.scale,
                session=r.session,
                flags=r.flags,
            )
        )
    with db.read_session() as session:
        loan = _load(session, loan_ref)
        dispositions = _dispositions(session, loan)
        lines = {line.id: line for line in totals.specimen_lines}
        entries = [
            _specimen(s, lines[s.public_id], dispositions, by_specimen[s.public_id])
            for s in loan.specimens
        ]
        terms = terms_in_force(loan.terms, now.date())
        sessions = {r.session for rs in by_specimen.values() for r in rs}
        backdated = _backdated(session, loan.id, sessions)
        return ReturnReport(
            generated_at=now,
            lender={
                "name": loan.lender.name,
                "institution_code": loan.lender.institution_code,
                "contact": loan.lender.contact_name,
                "email": loan.lender.contact_email,
            },
            loan={
                "id": loan.public_id,
                "reference": loan.reference,
                "title": loan.title,
                "borrower": loan.borrower,
                "status": loan.status.value,
                "received_on": loan.received_on,
                "due_on": terms.due_on,
                "returned_on": loan.returned_on,
            },
            terms_in_force=TermsView.of(terms),
            amendments=[TermsView.of(t) for t in loan.terms[1:]],
            documents=_documents(session, loan.id),
            totals=totals.model_copy(update={"specimen_lines": []}),
            specimens=entries,
            shipments=_shipments(session, loan.id),
            timeline=_timeline(session, loan),
            flags=sorted(set(totals.flags) | ({BACKDATED} if backdated else set())),
            backdated=backdated,
            ledger=LedgerHead(
                seq=head.head_seq,
                hash=head.head_hash,
                intact=head.ok,
                verify_command="tracker ledger verify",
                books_agree=not discrepancies,
                verified_from=head.verified_from,
                checkpoint_at=None if checked.checkpoint is None else checked.checkpoint[1],
                verification=verification_statement(checked),
            ),
            discrepancies=discrepancies,
        )


def _backdated(session: Session, loan_id: int, sessions: set[str]) -> list[BackdatedLine]:
    """The loan's backdated entries, and those of the instrument sessions its results
    come from (a session spans many loans, so it names none)."""
    query = (
        select(BackdatedEntry)
        .where(or_(BackdatedEntry.loan_id == loan_id, BackdatedEntry.item_ref.in_(sessions)))
        .order_by(BackdatedEntry.event_seq)
    )
    return [
        BackdatedLine(
            item=row.item_ref,
            specimen=format_id(Kind.SPECIMEN, row.specimen_id) if row.specimen_id else None,
            field=row.field,
            stated_at=row.stated_at,
            recorded_at=row.recorded_at,
            recorded_by=row.recorded_by,
            window_hours=row.window_hours,
            event_seq=row.event_seq,
        )
        for row in session.scalars(query)
    ]


def _load(session: Session, loan_ref: str) -> Loan:
    loan = get_loan(session, "loan", loan_ref)
    session.scalars(
        select(Loan)
        .where(Loan.id == loan.id)
        .options(
            selectinload(Loan.terms),
            selectinload(Loan.lender),
            selectinload(Loan.specimens)
            .selectinload(Specimen.powders)
            .selectinload(Powder.solutions)
            .selectinload(Solution.aliquots),
            selectinload(Loan.specimens)
            .selectinload(Specimen.powders)
            .selectinload(Powder.solutions)
            .selectinload(Solution.concentrations),
        )
    ).one()
    return loan


def _dispositions(session: Session, loan: Loan) -> dict[str, dict[str, Any]]:
    """The latest disposal payload per vial (reason, permission), read from the ledger."""
    ids = [p.public_id for s in loan.specimens for p in s.powders]
    ids += [x.public_id for s in loan.specimens for p in s.powders for x in p.solutions]
    found: dict[str, dict[str, Any]] = {}
    if not ids:
        return found
    query = (
        select(CustodyEvent.object_ref, CustodyEvent.payload)
        .where(
            CustodyEvent.object_ref.in_(ids),
            or_(*(CustodyEvent.action.endswith(f".{outcome}") for outcome in _OUTCOMES)),
        )
        .order_by(CustodyEvent.seq)
    )
    for ref, payload in session.execute(query):
        found[ref] = json.loads(payload)
    return found


def _specimen(
    specimen: Specimen,
    line: Any,
    dispositions: dict[str, dict[str, Any]],
    measured: list[ResultEntry],
) -> SpecimenEntry:
    powders = [_powder(p, dispositions.get(p.public_id, {})) for p in specimen.powders]
    solutions = [
        SolutionLine(
            id=x.public_id,
            powder=p.public_id,
            status=x.status.value,
            residual_g=x.residual_g,
            disposal_reason=dispositions.get(x.public_id, {}).get("reason"),
            recoveries=recoveries_of(x),
        )
        for p in specimen.powders
        for x in p.solutions
    ]
    return SpecimenEntry(
        id=specimen.public_id,
        catalog_number=specimen.catalog_number,
        institution_code=specimen.institution_code,
        scientific_name=specimen.scientific_name,
        skeletal_element=specimen.skeletal_element,
        status=specimen.status.value,
        sampled=bool(specimen.powders),
        condition_in=specimen.condition_in,
        condition_out=specimen.condition_out,
        received_at=specimen.received_at,
        returned_at=specimen.returned_at,
        return_shipment=_shipment_id(specimen.return_shipment_id),
        drilled_mg=line.drilled_mg,
        drilled_u_mg=line.drilled_u_mg,
        permitted_mg=line.permitted_mg,
        powders=powders,
        solutions=solutions,
        results=measured,
        photos=[],
        flags=line.flags,
    )


def _powder(powder: Powder, disposal: dict[str, Any]) -> PowderLine:
    left = (
        powder.residual_mg
        if powder.residual_mg is not None
        else max(powder_remaining(powder).value, 0.0)
    )
    return PowderLine(
        id=powder.public_id,
        tissue=powder.tissue,
        site=powder.site,
        drilled_at=powder.drilled_at,
        drilled_by=powder.drilled_by,
        mass_mg=powder.mass_mg,
        mass_u_mg=powder.mass_u_mg,
        dissolved_mg=sum(x.powder_mass_mg for x in powder.solutions),
        left_mg=left,
        status=powder.status.value,
        shipment=_shipment_id(powder.return_shipment_id),
        permission=disposal.get("permission"),
        override_reason=powder.override_reason,
    )


def _shipment_id(number: int | None) -> str | None:
    return None if number is None else Shipment(id=number).public_id


def _documents(session: Session, loan_id: int) -> list[DocumentView]:
    links = session.scalars(select(LoanDocument).where(LoanDocument.loan_id == loan_id))
    return [DocumentView.of(link.document, link.role) for link in links]


def _shipments(session: Session, loan_id: int) -> list[dict[str, Any]]:
    rows = session.scalars(
        select(Shipment)
        .where(Shipment.loan_id == loan_id)
        .order_by(Shipment.shipped_on, Shipment.id)
    )
    return [
        {
            "id": s.public_id,
            "direction": s.direction.value,
            "shipped_on": s.shipped_on,
            "carrier": s.carrier,
            "tracking": s.tracking,
        }
        for s in rows
    ]


def _timeline(session: Session, loan: Loan) -> list[TimelineEntry]:
    """Counts of each kind of custody event that touched the loan or its material."""
    refs = [loan.public_id] + [s.public_id for s in loan.specimens]
    powders = [p for s in loan.specimens for p in s.powders]
    solutions = [x for p in powders for x in p.solutions]
    refs += [p.public_id for p in powders] + [x.public_id for x in solutions]
    refs += [a.public_id for x in solutions for a in x.aliquots]
    query = (
        select(
            CustodyEvent.action, func.count(), func.min(CustodyEvent.at), func.max(CustodyEvent.at)
        )
        .where((CustodyEvent.object_ref.in_(refs)) | (CustodyEvent.parent_ref.in_(refs)))
        .group_by(CustodyEvent.action)
        .order_by(func.min(CustodyEvent.at))
    )
    return [
        TimelineEntry(action=a, said=action_words(a), count=n, first=first, last=last)
        for a, n, first, last in session.execute(query)
    ]


def attach_photos(db: Database, report: ReturnReport) -> tuple[ReturnReport, dict[str, bytes]]:
    """The report with each specimen's photos listed, and the photos' bytes by SHA-256."""
    files: dict[str, bytes] = {}
    with db.read_session() as session:
        rows = session.scalars(
            select(SpecimenPhoto)
            .join(Specimen)
            .where(Specimen.id.in_([int(s.id.split("-")[1]) for s in report.specimens]))
            .order_by(SpecimenPhoto.taken_at)
        )
        photos: dict[int, list[PhotoEntry]] = defaultdict(list)
        for row in rows:
            doc = row.document
            files[doc.sha256] = doc.content
            photos[row.specimen_id].append(
                PhotoEntry(
                    stage=row.stage,
                    sha256=doc.sha256,
                    filename=doc.filename,
                    media_type=doc.media_type,
                    caption=row.caption,
                    taken_at=row.taken_at,
                )
            )
    specimens = [
        s.model_copy(update={"photos": photos[int(s.id.split("-")[1])]}) for s in report.specimens
    ]
    return report.model_copy(update={"specimens": specimens}), files


class RecordReport(Request):
    loan: str
    files: dict[str, str]  # format -> SHA-256 of the file written
    head_seq: int
    head_hash: str
    despite_discrepancies: int = 0  # written despite this many (listed in the files)


class ReportRecord(View):
    loan: str
    files: dict[str, str]
    head_seq: int
    head_hash: str


def record_report(db: Database, actor: str | None, data: RecordReport | Raw) -> Done[ReportRecord]:
    """Record that a return report was produced, with its files' hashes and the head it shows."""
    request = parse(RecordReport, data)
    with unit_of_work(db, actor) as uow:
        loan = get_loan(uow.session, "loan", request.loan)
        view = ReportRecord(
            loan=loan.reference,
            files=request.files,
            head_seq=request.head_seq,
            head_hash=request.head_hash,
        )
        payload: dict[str, Any] = {
            "format": FORMAT,
            "files": request.files,
            "head_seq": request.head_seq,
            "head_hash": request.head_hash,
        }
        if request.despite_discrepancies:  # the books differed from the ledger
            payload["despite_discrepancies"] = request.despite_discrepancies
        return finish(uow, "report.generated", loan, payload, lambda: view)
