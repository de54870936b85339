"""A loan's line of the reconciliation, as the services give it back (a pydantic view).

Its flags and its place in the order come from :mod:`tracker.domain.loan_flags`.
"""

from __future__ import annotations

import math
from datetime import date

from pydantic import Field

from tracker.domain.loan_flags import Totals, loan_flags, used_fraction
from tracker.domain.models import Loan, LoanTerms
from tracker.services.core.views import View


class SpecimenLine(View):
    id: str
    catalog_number: str
    status: str
    powders: int
    drilled_mg: float
    drilled_u_mg: float
    permitted_mg: float | None
    dissolved_mg: float
    powder_on_hand_mg: float
    powder_returned_mg: float
    flags: tuple[str, ...]  # a tuple, so the collector can stop tracking a decade's lines


class LoanLine(View):
    id: str
    reference: str
    lender: str
    lender_code: str
    status: str
    terms_version: int
    permitted_tissues: list[str]
    max_mass_per_specimen_mg: float | None
    max_total_mass_mg: float | None
    max_specimens_sampled: int | None
    specimens: int
    on_hand: int
    sampled: int
    drilled_mg: float
    drilled_u_mg: float
    used_fraction: float | None
    dissolved_mg: float
    powder_on_hand_mg: float
    powder_returned_mg: float
    due_on: date
    days_left: int
    flags: list[str]
    specimen_lines: list[SpecimenLine] = Field(default_factory=list)


def loan_line(
    loan: Loan,
    terms: LoanTerms,
    today: date,
    totals: Totals,
    specimen_lines: list[SpecimenLine] | None = None,
) -> LoanLine:
    """A loan's line judged on ``today`` by the ``terms`` in force, from its totals (and its
    specimens' lines, when they were read)."""
    used = used_fraction(terms, totals)
    return LoanLine(
        id=loan.public_id,
        reference=loan.reference,
        lender=loan.lender.name,
        lender_code=loan.lender.institution_code or loan.lender.name,
        status=loan.status.value,
        terms_version=terms.version,
        permitted_tissues=list(terms.permitted_tissues),
        max_mass_per_specimen_mg=terms.max_mass_per_specimen_mg,
        max_total_mass_mg=terms.max_total_mass_mg,
        max_specimens_sampled=terms.max_specimens_sampled,
        specimens=totals.specimens,
        on_hand=totals.on_hand,
        sampled=totals.sampled,
        drilled_mg=totals.drilled,
        drilled_u_mg=math.sqrt(totals.variance),
        used_fraction=used,
        dissolved_mg=totals.dissolved,
        powder_on_hand_mg=totals.powder_on_hand,
        powder_returned_mg=totals.returned,
        due_on=terms.due_on,
        days_left=(terms.due_on - today).days,
        flags=loan_flags(loan.status, terms, today, totals, used),
        specimen_lines=specimen_lines or [],
    )
