"""What a return report holds, as the services give it back: plain views, safe to print, to
draw as a PDF or to dump as JSON. Built by :mod:`tracker.services.read.reports`."""

from __future__ import annotations

from datetime import datetime
from typing import Any

from pydantic import Field

from tracker.services.core.views import DocumentView, TermsView, View
from tracker.services.ledger.audit import AUDIT_COMMAND, AuditReport, DiscrepancyView
from tracker.services.read.item_facts import RecoveryFacts
from tracker.services.read.reconcile import LoanLine

FORMAT = "tracker-return-report/1"


class PowderLine(View):
    id: str
    tissue: str
    site: str | None
    drilled_at: datetime
    drilled_by: str
    mass_mg: float
    mass_u_mg: float
    dissolved_mg: float
    left_mg: float  # weighed out if it left the lab, else what remains on the books
    status: str
    shipment: str | None
    permission: str | None
    override_reason: str | None


class SolutionLine(View):
    id: str
    powder: str
    status: str
    residual_g: float | None
    disposal_reason: str | None
    recoveries: list[RecoveryFacts] = Field(default_factory=list)  # of its dissolution


class ResultEntry(View):
    ratio: str
    kind: str
    value: float
    two_sd: float | None
    uncertainty: str  # "internal", or "long-term" when two_sd is the lab's larger one
    n: int
    scale: str
    session: str
    flags: list[str]


class PhotoEntry(View):
    stage: str
    sha256: str
    filename: str
    media_type: str
    caption: str | None
    taken_at: datetime


class SpecimenEntry(View):
    id: str
    catalog_number: str
    institution_code: str | None
    scientific_name: str | None
    skeletal_element: str | None
    status: str
    sampled: bool
    condition_in: str | None
    condition_out: str | None
    received_at: datetime | None
    returned_at: datetime | None
    return_shipment: str | None
    drilled_mg: float
    drilled_u_mg: float
    permitted_mg: float | None
    powders: list[PowderLine]
    solutions: list[SolutionLine]
    results: list[ResultEntry]
    photos: list[PhotoEntry]
    flags: list[str]


class BackdatedLine(View):
    """An entry a manager dated further back than the lab's window: both of its times."""

    item: str  # what its event concerns (a powder, a specimen, an instrument session ...)
    specimen: str | None
    field: str  # which time was stated, e.g. "drilled_at"
    stated_at: datetime
    recorded_at: datetime
    recorded_by: str
    window_hours: int
    event_seq: int


class TimelineEntry(View):
    action: str  # the ledger's name
    said: str  # in words, for the lender
    count: int
    first: datetime
    last: datetime


class LedgerHead(View):
    seq: int
    hash: str
    intact: bool  # the chain's hashes
    verify_command: str
    books_agree: bool = True  # the loan's rows, held against the ledger (audit_loan)
    audit_command: str = AUDIT_COMMAND
    # how the chain was verified for this report: in full, or from this computer's checkpoint
    verified_from: int = 1
    checkpoint_at: datetime | None = None  # when the events before verified_from were
    verification: str = ""  # the statement, in words

    @property
    def vouched(self) -> bool:
        """Only a chain intact *and* books that agree with it are said to be intact."""
        return self.intact and self.books_agree


def verification_statement(checked: AuditReport) -> str:
    """What the report's word on the chain rests on: the events verified for it, and
    those a checkpoint of this computer vouches for (with its date), or a checkpoint found
    and not trusted."""
    chain = checked.chain
    if not chain.ok:
        return f"verification stopped at event #{chain.broken_seq}: {chain.reason}"
    if checked.checkpoint is None:
        said = f"all {chain.head_seq:,} events verified for this report"
    else:
        seq, at = checked.checkpoint
        head = chain.head_seq
        now = (
            "no event since"
            if head == seq
            else f"event #{head:,} verified for this report"
            if head == seq + 1
            else f"events #{seq + 1:,}–#{head:,} verified for this report"
        )
        said = (
            f"events #1–#{seq:,} verified earlier on this computer (its checkpoint of "
            f"{at:%Y-%m-%d %H:%M} UTC); {now}"
        )
    return f"{said}; {checked.note}" if checked.note else said


class ReturnReport(View):
    format: str = FORMAT
    generated_at: datetime
    lender: dict[str, str | None]
    loan: dict[str, Any]
    terms_in_force: TermsView
    amendments: list[TermsView]
    documents: list[DocumentView]
    totals: LoanLine
    specimens: list[SpecimenEntry]
    shipments: list[dict[str, Any]]
    timeline: list[TimelineEntry]
    flags: list[str]
    ledger: LedgerHead
    notes: list[str] = Field(default_factory=list)
    backdated: list[BackdatedLine] = Field(default_factory=list)
    # Written despite the books differing from the ledger: every difference, listed first.
    discrepancies: list[DiscrepancyView] = Field(default_factory=list)

    def powder_left_mg(self, status: str) -> float:
        """Powder mass left in vials that ended ``status`` (destroyed, retained, consumed)."""
        return sum(p.left_mg for s in self.specimens for p in s.powders if p.status == status)
