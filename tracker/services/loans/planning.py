"""Planning: how much powder to drill for the analyses wanted, and whether the loan allows it.

For each planned analysis the element needed is µg per analysis × replicates,
divided by the expected column yield; a share of every solution goes to the
concentration measurement and archive aliquots, so the total is divided by
(1 − that share). The powder to drill is that element mass over the material's
mass fraction — the *low* end of its range, so the plan holds for any specimen
of that material — plus a safety margin. Powder already on hand counts first.
Read-only: a plan records nothing.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Annotated, Any

from pydantic import Field

from tracker.db.database import Database
from tracker.domain.budget import as_float
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.ids import Kind, looks_like_id, parse_id
from tracker.domain.materials import TISSUE_DEFAULTS
from tracker.domain.models import ContainerStatus, Loan, Specimen, SpecimenStatus
from tracker.domain.terms import terms_in_force
from tracker.services.admin.materials import find_material
from tracker.services.bench.solutions import (
    powder_remaining,
    solution_element,
    solution_remaining_g,
)
from tracker.services.core.inputs import Element, Raw, Request, parse
from tracker.services.core.lookup import get_by_id, get_loan
from tracker.services.core.views import View


class PlannedAnalysis(Request):
    element: Element = "Ca"
    ug_per_analysis: Annotated[float, Field(gt=0, le=100_000)]
    replicates: Annotated[int, Field(ge=1, le=100)] = 1
    expected_yield: Annotated[float, Field(gt=0, le=1)] = 0.95


class PlanRequest(Request):
    target: str  # a specimen ID, or a loan ID or reference
    analyses: Annotated[list[PlannedAnalysis], Field(min_length=1)]
    material: str | None = None  # default: from the tissue
    tissue: str | None = None  # default: the loan's first permitted tissue
    aliquot_share: Annotated[float, Field(ge=0, lt=1)] = 0.10
    margin_percent: Annotated[float, Field(ge=0, le=300)] = 20.0
    # The smallest powder worth weighing and dissolving (common practice: about 0.5 mg on a
    # microbalance reading to 0.001 mg, where the weighing's relative uncertainty is < 0.1 %).
    min_powder_mg: Annotated[float, Field(ge=0, le=1000)] = 0.5


ANALYSIS_FIELDS = tuple(PlannedAnalysis.model_fields)  # element, µg, replicates, yield


def one_analysis(target: str, values: Mapping[str, Any]) -> dict[str, Any]:
    """A plan request for one kind of analysis from flat fields (the command line's options,
    the interface's form): the analysis's own fields go into ``analyses``, the rest stay on
    the request; fields left out (None) take the request's defaults."""
    given = {name: value for name, value in values.items() if value is not None}
    analysis = {name: given.pop(name) for name in ANALYSIS_FIELDS if name in given}
    return {"target": target, **given, "analyses": [analysis]}


def default_of(name: str) -> Any:
    """The value a plan takes for a field left out (None where it is worked out instead)."""
    for model in (PlannedAnalysis, PlanRequest):
        if name in model.model_fields:
            return model.model_fields[name].get_default()
    raise KeyError(name)


class SpecimenPlan(View):
    id: str
    catalog_number: str
    element_needed_ug: float
    mass_fraction_low: float
    mass_fraction_high: float
    powder_needed_mg: float
    # powder still in vials plus element already in solution, counted as powder equivalent
    powder_on_hand_mg: float
    to_drill_mg: float
    feasible: bool
    reason: str


class Plan(View):
    loan: str
    material: str
    tissue: str
    terms_version: int
    total_to_drill_mg: float
    loan_remaining_before_mg: float | None
    loan_remaining_after_mg: float | None
    specimens: list[SpecimenPlan]
    not_feasible: list[str]


@dataclass
class _Budget:
    """What the loan still allows as the plan is walked specimen by specimen."""

    total_left: float | None
    count_left: int | None


def plan(db: Database, data: PlanRequest | Raw) -> Plan:
    """Powder to drill per specimen, checked against what the loan still permits."""
    request = parse(PlanRequest, data)
    with db.read_session() as session:
        loan, targets = _targets(session, request.target)
        terms = terms_in_force(loan.terms, db.clock().date())
        tissue = (request.tissue or terms.permitted_tissues[0]).lower()
        name = request.material or TISSUE_DEFAULTS.get(tissue)
        if name is None:
            raise InputError("material", None, f"say which material the {tissue} is")
        material = find_material(session, "material", name)
        element = request.analyses[0].element
        span = material.fraction_range(element)
        if span is None:
            raise RuleViolation("material", material.name, f"holds no known amount of {element}")
        needed_ug = _element_needed(request)
        powder_mg = max(
            needed_ug / 1000 / span[0] * (1 + request.margin_percent / 100), request.min_powder_mg
        )
        drilled_total = sum(float(p.mass_mg) for s in loan.specimens for p in s.powders)
        sampled = sum(1 for s in loan.specimens if s.powders)
        budget = _Budget(
            None
            if terms.max_total_mass_mg is None
            else float(terms.max_total_mass_mg) - drilled_total,
            None if terms.max_specimens_sampled is None else terms.max_specimens_sampled - sampled,
        )
        before = budget.total_left
        walk = _Walk(
            element,
            needed_ug,
            span,
            powder_mg,
            as_float(terms.max_mass_per_specimen_mg),
            tissue,
            list(terms.permitted_tissues),
            budget,
        )
        lines = [walk.plan(specimen) for specimen in targets]
        return Plan(
            loan=loan.reference,
            material=material.name,
            tissue=tissue,
            terms_version=terms.version,
            total_to_drill_mg=sum(x.to_drill_mg for x in lines if x.feasible),
            loan_remaining_before_mg=before,
            loan_remaining_after_mg=budget.total_left,
            specimens=lines,
            not_feasible=[x.id for x in lines if not x.feasible],
        )


def _targets(session: object, target: str) -> tuple[Loan, list[Specimen]]:
    if looks_like_id(target) and parse_id(target).kind is Kind.SPECIMEN:
        specimen = get_by_id(session, Specimen, "target", target)  # type: ignore[arg-type]
        return specimen.loan, [specimen]
    loan = get_loan(session, "target", target)  # type: ignore[arg-type]
    return loan, [s for s in loan.specimens if s.status is not SpecimenStatus.RETURNED]


def _element_needed(request: PlanRequest) -> float:
    per_run = sum(a.ug_per_analysis * a.replicates / a.expected_yield for a in request.analyses)
    return per_run / (1 - request.aliquot_share)


def _on_hand_mg(specimen: Specimen, element: str, fraction_low: float) -> float:
    """Powder still in vials, plus element already in solution counted as powder equivalent."""
    powder = sum(
        max(powder_remaining(p).value, 0.0)
        for p in specimen.powders
        if p.status is ContainerStatus.AVAILABLE
    )
    dissolved_ug = 0.0
    for p in specimen.powders:
        for solution in p.solutions:
            amount = solution_element(solution, element)
            if solution.status is ContainerStatus.AVAILABLE and amount is not None:
                share = solution_remaining_g(solution).value / float(solution.solution_mass_g)
                dissolved_ug += amount[1].value * max(share, 0.0)
    return powder + dissolved_ug / 1000 / fraction_low


@dataclass
class _Walk:
    """One plan, applied specimen by specimen while the loan's remaining budget shrinks."""

    element: str
    needed_ug: float
    span: tuple[float, float]
    powder_mg: float
    per_specimen: float | None
    tissue: str
    permitted: list[str]
    budget: _Budget

    def plan(self, specimen: Specimen) -> SpecimenPlan:
        on_hand = _on_hand_mg(specimen, self.element, self.span[0])
        to_drill = max(self.powder_mg - on_hand, 0.0)
        reason = self.why_not(specimen, to_drill)
        feasible = reason == ""
        if feasible and to_drill > 0:
            if self.budget.total_left is not None:
                self.budget.total_left -= to_drill
            if self.budget.count_left is not None and not specimen.powders:
                self.budget.count_left -= 1
        return SpecimenPlan(
            id=specimen.public_id,
            catalog_number=specimen.catalog_number,
            element_needed_ug=self.needed_ug,
            mass_fraction_low=self.span[0],
            mass_fraction_high=self.span[1],
            powder_needed_mg=self.powder_mg,
            powder_on_hand_mg=on_hand,
            to_drill_mg=to_drill,
            feasible=feasible,
            reason=reason or ("enough powder or solution on hand" if to_drill == 0 else "ok"),
        )

    def why_not(self, specimen: Specimen, to_drill: float) -> str:
        """Empty when the drill fits every term; else the first term it breaks, in words."""
        if to_drill == 0:
            return ""
        drilled = sum(float(p.mass_mg) for p in specimen.powders)
        budget, per_specimen = self.budget, self.per_specimen
        if self.tissue not in self.permitted:
            return f"the loan does not permit {self.tissue}"
        if specimen.status is not SpecimenStatus.ON_HAND:
            return f"specimen is {specimen.status.value.replace('_', ' ')}"
        if per_specimen is not None and drilled + to_drill > per_specimen:
            return (
                f"needs {to_drill:.3f} mg; per-specimen limit {per_specimen:g} mg leaves "
                f"{max(per_specimen - drilled, 0):.3f} mg"
            )
        if budget.total_left is not None and to_drill > budget.total_left:
            return (
                f"needs {to_drill:.3f} mg; the loan's total leaves "
                f"{max(budget.total_left, 0):.3f} mg after the specimens above"
            )
        if budget.count_left is not None and not specimen.powders and budget.count_left <= 0:
            return "the loan's specimen count is used up"
        return ""
