"""A loan's line of the reconciliation, as the services give it back (a pydantic view).

Its flags and its place in the order come from :mod:`tracker.services.loan_rules`.
"""

from __future__ import annotations

import math
from dataclasses import asdict
from datetime import date

from pydantic import Field

from tracker.services.loan_rules import LoanFacts, Totals, overview_line
from tracker.services.view_base import View


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
    flags: list[str]


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
    loan: LoanFacts,
    today: date,
    totals: Totals,
    specimen_lines: list[SpecimenLine] | None = None,
) -> LoanLine:
    """A loan's line from its totals (and its specimens' lines, when they were read): what the
    overview shows of it (:func:`overview_line`), its terms and its masses in full."""
    shown = asdict(overview_line(loan, today, totals))
    terms = loan.terms
    return LoanLine(
        **shown,
        lender=loan.lender,
        terms_version=terms.version,
        permitted_tissues=list(terms.permitted_tissues),
        max_mass_per_specimen_mg=terms.max_mass_per_specimen_mg,
        max_specimens_sampled=terms.max_specimens_sampled,
        drilled_u_mg=math.sqrt(totals.variance),
        dissolved_mg=totals.dissolved,
        powder_on_hand_mg=totals.powder_on_hand,
        powder_returned_mg=totals.returned,
        specimen_lines=specimen_lines or [],
    )
