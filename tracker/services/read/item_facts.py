"""The facts a lineage node states about its item, typed per kind of item.

Each kind has its own model, told apart by ``kind`` (the node's kind), so a reader — the
CLI, the interface, a script reading ``tracker --json show`` — finds its fields by name and
type instead of looking keys up in a dictionary. Masses read off a balance are the exact
decimals the database holds (``6.020`` stays ``6.020``); what is computed from them (what
remains, an element's amount, a yield) is a float with its propagated uncertainty.
Units are in the field names. How the numbers are written is ``domain/precision.py``'s.
"""

from __future__ import annotations

from datetime import datetime
from decimal import Decimal
from typing import Annotated, Literal

from pydantic import Field

from tracker.domain.base import HasPublicId
from tracker.domain.ids import Kind, format_id
from tracker.domain.models import Aliquot, BatchPosition, Cut, Loan, Powder, Solution
from tracker.domain.models.instrument import Result
from tracker.domain.recovery import Recovery, Window
from tracker.services.bench.columns import cut_yield
from tracker.services.bench.recovery import dissolution_recoveries
from tracker.services.bench.solutions import (
    aliquot_element,
    powder_remaining,
    solution_element,
    solution_remaining_g,
)
from tracker.services.core.views import View


class LoanFacts(View):
    kind: Literal["loan"] = "loan"
    lender: str


class PowderFacts(View):
    kind: Literal["powder"] = "powder"
    mass_mg: Decimal  # net mass as weighed
    mass_u_mg: Decimal
    remaining_mg: float  # not yet taken into a solution
    remaining_u_mg: float


class ElementAmount(View):
    """An element in the whole of a solution (or of an aliquot), in µg."""

    ug: float
    u_ug: float


class RecoveryFacts(View):
    """The share of an element the dissolved powder should hold that the solution holds
    (1.0 = 100 %); a range when the material's mass fraction is one (``low`` < ``high``).
    See :mod:`tracker.domain.recovery`."""

    element: str
    material: str
    low: float
    high: float
    u_low: float
    u_high: float
    window_low: float
    window_high: float
    outside: bool  # the whole recovery lies outside the lab's window

    @classmethod
    def of(cls, found: Recovery) -> RecoveryFacts:
        return cls(
            element=found.element,
            material=found.material,
            low=found.low,
            high=found.high,
            u_low=found.u_low,
            u_high=found.u_high,
            window_low=found.window.low,
            window_high=found.window.high,
            outside=found.outside,
        )

    def as_recovery(self) -> Recovery:
        window = Window(self.window_low, self.window_high)
        return Recovery(
            self.element, self.material, self.low, self.high, self.u_low, self.u_high, window
        )


def recoveries_of(solution: Solution) -> list[RecoveryFacts]:
    """Every reader's recoveries of a solution (show, the interface, the return report)."""
    return [RecoveryFacts.of(r) for r in dissolution_recoveries(solution)]


class SolutionFacts(View):
    kind: Literal["solution"] = "solution"
    powder_mass_mg: Decimal  # powder taken into the solution
    powder_mass_u_mg: Decimal
    solution_mass_g: Decimal
    solution_mass_u_g: Decimal
    remaining_g: float  # not yet taken into aliquots
    remaining_u_g: float
    elements: dict[str, ElementAmount] = Field(default_factory=dict)  # by element symbol
    recoveries: list[RecoveryFacts] = Field(default_factory=list)


class AliquotFacts(View):
    kind: Literal["aliquot"] = "aliquot"
    mass_g: Decimal
    mass_u_g: Decimal
    elements: dict[str, ElementAmount] = Field(default_factory=dict)  # in the aliquot


class PositionFacts(View):
    kind: Literal["batchposition"] = "batchposition"
    loaded_ug: float | None  # element loaded on the column (none for a blank)
    loaded_u_ug: float | None
    removed_at: datetime | None = None  # taken off its batch as scanned by mistake
    removal_reason: str | None = None


class CutResult(View):
    """One instrument result of a cut: a δ in ‰, or a ratio, with its 2SD."""

    session: str
    ratio: str
    kind: str  # "delta" or "ratio"
    value: float
    scale: str
    n: int
    two_sd: float | None
    flags: list[str]


class CutFacts(View):
    kind: Literal["cut"] = "cut"
    recovered_ug: Decimal | None
    recovered_u_ug: Decimal | None
    yield_fraction: float | None = Field(default=None, alias="yield")
    yield_u: float | None = None
    results: list[CutResult] = Field(default_factory=list)

    model_config = View.model_config | {"populate_by_name": True, "serialize_by_alias": True}


ItemFacts = Annotated[
    LoanFacts | PowderFacts | SolutionFacts | AliquotFacts | PositionFacts | CutFacts,
    Field(discriminator="kind"),
]


def facts_of(row: HasPublicId) -> ItemFacts | None:
    """The facts of one item; None for a kind whose label says all there is."""
    match row:
        case Loan():
            return LoanFacts(lender=row.lender.name)
        case Powder():
            left = powder_remaining(row)
            return PowderFacts(
                mass_mg=row.mass_mg,
                mass_u_mg=row.mass_u_mg,
                remaining_mg=left.value,
                remaining_u_mg=left.u,
            )
        case Solution():
            return _solution_facts(row)
        case Aliquot():
            return _aliquot_facts(row)
        case BatchPosition():
            return PositionFacts(
                loaded_ug=row.loaded_ug,
                loaded_u_ug=row.loaded_u_ug,
                removed_at=row.removed_at,
                removal_reason=row.removal_reason,
            )
        case Cut():
            return _cut_facts(row)
    return None


def _solution_facts(row: Solution) -> SolutionFacts:
    left = solution_remaining_g(row)
    elements = {}  # every element measured in it: µg in the whole solution
    for symbol in dict.fromkeys(c.element for c in row.concentrations):
        amount = solution_element(row, symbol)
        if amount is not None:
            elements[symbol] = ElementAmount(ug=amount[1].value, u_ug=amount[1].u)
    return SolutionFacts(
        powder_mass_mg=row.powder_mass_mg,
        powder_mass_u_mg=row.powder_mass_u_mg,
        solution_mass_g=row.solution_mass_g,
        solution_mass_u_g=row.solution_mass_u_g,
        remaining_g=left.value,
        remaining_u_g=left.u,
        elements=elements,
        recoveries=recoveries_of(row),
    )


def _aliquot_facts(row: Aliquot) -> AliquotFacts:
    elements = {}
    for symbol in dict.fromkeys(c.element for c in row.solution.concentrations):
        amount = aliquot_element(row, symbol)
        if amount is not None:
            elements[symbol] = ElementAmount(ug=amount[1], u_ug=amount[2])
    return AliquotFacts(
        mass_g=row.mass_g,
        mass_u_g=row.mass_u_g,
        elements=elements,
    )


def _cut_facts(row: Cut) -> CutFacts:
    ratio = cut_yield(row)
    return CutFacts(
        recovered_ug=row.recovered_ug,
        recovered_u_ug=row.recovered_u_ug,
        yield_fraction=None if ratio is None else ratio.value,
        yield_u=None if ratio is None else ratio.u,
        results=[_result(r) for r in row.results],
    )


def _result(r: Result) -> CutResult:
    return CutResult(
        session=format_id(Kind.INSTRUMENT_SESSION, r.session_id),
        ratio=r.ratio,
        kind=r.kind,
        value=r.delta_permil,
        scale=r.scale,
        n=r.n,
        two_sd=None if r.sd_permil is None else 2 * r.sd_permil,
        flags=list(r.flags),
    )
