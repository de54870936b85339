"""Amendments to a loan's terms, and the documents that carry them.

Each amendment is a new, complete version of the terms with the date it takes
effect, who recorded it and the SHA-256 of the letter or e-mail that grants it.
Rules use the version in force on the day of each event, so a drill before an
extension is judged by the old due date and a drill after it by the new one.
"""

from __future__ import annotations

import hashlib
import mimetypes
from datetime import date, datetime
from decimal import Decimal
from typing import Annotated, Any

from pydantic import Field
from sqlalchemy import select
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.base import decimal_text
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.models import (
    Disposition,
    Document,
    LoanDocument,
    LoanStatus,
    LoanTerms,
    TermsKind,
)
from tracker.services.core.common import finish
from tracker.services.core.inputs import Raw, Request, parse
from tracker.services.core.lookup import get_loan
from tracker.services.core.uow import UnitOfWork, unit_of_work
from tracker.services.core.views import DocumentView, Done, LoanView
from tracker.services.loans.lending import TermsInput, terms_payload, terms_row

MAX_DOCUMENT_BYTES = 50 * 1024 * 1024


class Upload(Request):
    """A file handed over by an entry point: its name and its bytes."""

    filename: Annotated[str, Field(min_length=1, max_length=255)]
    content: Annotated[bytes, Field(min_length=1, max_length=MAX_DOCUMENT_BYTES)]


def store_document(session: Session, upload: Upload, now: datetime) -> Document:
    """Keep a file once, by its SHA-256; the same bytes uploaded again reuse the row."""
    digest = hashlib.sha256(upload.content).hexdigest()
    existing = session.scalars(select(Document).where(Document.sha256 == digest)).one_or_none()
    if existing is not None:
        return existing
    media_type = mimetypes.guess_type(upload.filename)[0] or "application/octet-stream"
    document = Document(
        sha256=digest,
        filename=upload.filename,
        media_type=media_type,
        size_bytes=len(upload.content),
        content=upload.content,
        added_at=now,
    )
    session.add(document)
    session.flush()
    return document


class Amend(Request):
    """A change to the terms; fields left out keep their current value."""

    loan: str
    kind: TermsKind
    effective_from: date
    reason: Annotated[str, Field(min_length=3, max_length=4000)]
    document: Upload | None = None
    permitted_tissues: list[str] | str | None = None
    max_mass_per_specimen: str | None = None
    max_total_mass: str | None = None
    max_specimens_sampled: int | None = None
    due_on: date | None = None
    powder_disposition: Disposition | None = None
    solution_disposition: Disposition | None = None


_CHANGEABLE = (
    "permitted_tissues",
    "max_mass_per_specimen",
    "max_total_mass",
    "max_specimens_sampled",
    "due_on",
    "powder_disposition",
    "solution_disposition",
)


def amend_loan(db: Database, actor: str | None, data: Amend | Raw) -> Done[LoanView]:
    """Record an amendment (extension, raised allowance, added specimens...): managers only."""
    request = parse(Amend, data)
    if request.kind is TermsKind.ORIGINAL:
        raise InputError("kind", "original", "the original terms are set when the loan is added")
    with unit_of_work(db, actor) as uow:
        uow.require_manager("amending a loan")
        loan = get_loan(uow.session, "loan", request.loan)
        if loan.status is LoanStatus.CLOSED:
            raise RuleViolation("loan", loan.reference, "is closed")
        current = loan.terms[-1]
        _check_dates(request, loan.terms[0], current)
        merged = parse(TermsInput, _merge(current, request))
        if terms_payload(merged) == terms_payload(parse(TermsInput, _merge(current, None))):
            raise InputError("amendment", None, "changes nothing in the terms in force")
        if request.kind is TermsKind.EXTENSION and merged.due_on <= current.due_on:
            raise InputError(
                "due-on",
                merged.due_on.isoformat(),
                f"an extension must move the due date past {current.due_on}",
            )
        document = (
            store_document(uow.session, request.document, uow.now) if request.document else None
        )
        row = terms_row(
            merged,
            version=current.version + 1,
            kind=request.kind,
            effective_from=request.effective_from,
            recorded_by=uow.operator.code,
        )
        row.recorded_at, row.document, row.notes = uow.now, document, request.reason
        loan.terms.append(row)
        if document is not None:
            _link(uow, loan.id, document, "amendment")
        payload = {
            "version": row.version,
            "kind": request.kind.value,
            "effective_from": request.effective_from.isoformat(),
            "reason": request.reason,
            "terms": terms_payload(merged),
            "document": _doc(document),
        }
        return finish(
            uow, "loan.amended", loan, payload, lambda: LoanView.of(loan, request.effective_from)
        )


def _check_dates(request: Amend, original: LoanTerms, latest: LoanTerms) -> None:
    """Amendments take effect no earlier than the loan, and in the order they are recorded."""
    day = request.effective_from.isoformat()
    if request.effective_from < original.effective_from:
        raise InputError(
            "effective-from",
            day,
            f"is before the loan began ({original.effective_from.isoformat()})",
        )
    if request.effective_from < latest.effective_from:
        raise InputError(
            "effective-from",
            day,
            f"is before version {latest.version} took effect "
            f"({latest.effective_from.isoformat()}); record amendments in order",
        )


def _merge(current: LoanTerms, request: Amend | None) -> dict[str, Any]:
    """The current terms as a TermsInput dict, with the request's changes laid over them."""
    base: dict[str, Any] = {
        "permitted_tissues": list(current.permitted_tissues),
        "max_mass_per_specimen": _mg(current.max_mass_per_specimen_mg),
        "max_total_mass": _mg(current.max_total_mass_mg),
        "max_specimens_sampled": current.max_specimens_sampled,
        "due_on": current.due_on,
        "return_specimens": current.return_specimens,
        "powder_disposition": current.powder_disposition,
        "solution_disposition": current.solution_disposition,
        "report_data": current.report_data,
        "acknowledgement": current.acknowledgement,
    }
    if request is not None:
        for name in _CHANGEABLE:
            value = getattr(request, name)
            if value is not None:
                base[name] = value
    return base


def _mg(value: Decimal | None) -> str | None:
    return None if value is None else f"{decimal_text(value)} mg"


def _link(uow: UnitOfWork, loan_id: int, document: Document, role: str) -> None:
    exists = uow.session.scalars(
        select(LoanDocument).where(
            LoanDocument.loan_id == loan_id, LoanDocument.document_id == document.id
        )
    ).first()
    if exists is None:
        uow.session.add(LoanDocument(loan_id=loan_id, document=document, role=role))


def _doc(document: Document | None) -> dict[str, Any] | None:
    if document is None:
        return None
    return {
        "id": document.public_id,
        "sha256": document.sha256,
        "filename": document.filename,
        "size_bytes": document.size_bytes,
    }


class Attach(Request):
    loan: str
    role: Annotated[str, Field(pattern="^(agreement|amendment|correspondence|photo|other)$")]
    document: Upload


def attach_document(db: Database, actor: str | None, data: Attach | Raw) -> Done[DocumentView]:
    """Keep a loan's agreement, letters or photos, identified by their SHA-256."""
    request = parse(Attach, data)
    with unit_of_work(db, actor) as uow:
        loan = get_loan(uow.session, "loan", request.loan)
        document = store_document(uow.session, request.document, uow.now)
        _link(uow, loan.id, document, request.role)
        payload = {"role": request.role, "document": _doc(document)}
        return finish(
            uow,
            "loan.document_attached",
            document,
            payload,
            lambda: DocumentView.of(document, request.role),
            parent=loan,
        )
