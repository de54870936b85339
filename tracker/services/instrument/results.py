"""Results tied back to specimens, accepted reference values, and changes of scale.

A result belongs to a column cut; the cut to its column position, aliquot, solution,
powder and finally the lender's specimen — so results can be listed per loan. Values
are reported on the session's scale (its bracketing standard) or converted exactly to
another scale through the accepted δ of that scale's reference on the session's scale, and
a δ measured on one ratio can be shown on another of its element's ratios by a
mass-dependent law (``domain.isotopes.convert_delta``), marked as converted.
"""

from __future__ import annotations

from datetime import date
from typing import Annotated, Literal, TypeVarTuple

from pydantic import Field, model_validator
from sqlalchemy import Select, select
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.delta import change_scale, invert
from tracker.domain.errors import InputError, NotFound, RuleViolation
from tracker.domain.isotopes import (
    ISOTOPE_MASS,
    LAWS,
    REPORTED_RATIO,
    Law,
    convert_delta,
    has_ratio,
    parse_ratio,
)
from tracker.domain.models import (
    Aliquot,
    BatchPosition,
    Cut,
    InstrumentSession,
    Loan,
    Powder,
    ReferenceMaterial,
    ReferenceValue,
    Result,
    Solution,
    Specimen,
)
from tracker.domain.reproducibility import Basis, reported_two_sd
from tracker.services.core.common import finish
from tracker.services.core.inputs import FieldProblem, Name, Raw, Request, parse
from tracker.services.core.lookup import get_loan, get_reference_material
from tracker.services.core.uow import unit_of_work
from tracker.services.core.views import Done, View
from tracker.services.instrument.reproducibility import lab_record, session_flag

Row = TypeVarTuple("Row")


class SpecimenResult(View):
    specimen: str
    catalog_number: str
    loan: str
    cut: str
    session: str
    ratio: str
    kind: str
    value: float
    two_sd: float | None  # the 2SD reported: the larger of internal_two_sd and the lab's
    internal_two_sd: float | None  # the spread of this sample's own runs
    uncertainty: Basis  # which of the two two_sd is
    two_se: float | None
    n: int
    scale: str
    age_min_ma: float | None
    age_max_ma: float | None
    determined_on: date  # the instrument session's day
    determined_by: str  # the operator who ran it
    flags: list[str]
    # set on a δ shown on another ratio than it was measured on: that ratio, the law, its k
    converted_from: str | None = None
    law: Law | None = None
    factor: float | None = None


def results(
    db: Database,
    loan: str | None = None,
    scale: str | None = None,
    ratio: str | None = None,
    law: str = "exponential",
) -> list[SpecimenResult]:
    """Every sample result, with its specimen, optionally converted to another scale and
    each δ to another ratio of its element (``ratio``) by a mass-dependent ``law``."""
    wanted = None if ratio is None else _wanted(ratio, law)
    with db.read_session() as session:
        query = (
            _to_specimen(select(Result, Cut, Specimen, Loan, InstrumentSession))
            .join(Loan, Specimen.loan_id == Loan.id)
            .join(InstrumentSession, Result.session_id == InstrumentSession.id)
            .order_by(Loan.id, Specimen.id, Result.ratio, Result.id)
        )
        if loan is not None:
            query = query.where(Loan.id == get_loan(session, "loan", loan).id)
        anchors = {} if scale is None else _anchors(session, scale)
        record = lab_record(session)
        lines, elements, unanchored = [], set(), 0
        for result, cut, specimen, loan_row, run in session.execute(query):
            value, on, factor = _on_scale(result, scale, anchors)
            missing = _no_scale_value(result, scale, on)
            unanchored += bool(missing)
            internal = None if result.sd_permil is None else 2 * result.sd_permil
            method = (result.ratio, result.scale, result.kind)
            two_sd, basis = reported_two_sd(internal, record.two_sd.get(method))
            outside = record.outside.get(result.session_id)
            line = SpecimenResult(
                specimen=specimen.public_id,
                catalog_number=specimen.catalog_number,
                loan=loan_row.reference,
                cut=cut.public_id,
                session=run.public_id,
                ratio=result.ratio,
                kind=result.kind,
                value=value,
                two_sd=None if two_sd is None else two_sd * factor,
                internal_two_sd=None if internal is None else internal * factor,
                uncertainty=basis,
                two_se=None if result.two_se_permil is None else result.two_se_permil * factor,
                n=result.n,
                scale=on,
                age_min_ma=specimen.age_min_ma,
                age_max_ma=specimen.age_max_ma,
                determined_on=run.started_at.date(),
                determined_by=run.operator,
                flags=[*result.flags, *missing, *([session_flag(outside)] if outside else [])],
            )
            lines.append(line if wanted is None else _on_ratio(line, run.element, *wanted))
            elements.add(run.element)
    if scale is not None and unanchored and not any(_on(line, scale) for line in lines):
        _refuse_unanchored(scale, lines)
    if wanted is not None:
        _check_element(elements or set(ISOTOPE_MASS), wanted[0])
    return lines


def _wanted(ratio: str, law: str) -> tuple[str, Law]:
    """The target ratio and law, checked before anything is read."""
    try:
        parse_ratio(ratio)
    except ValueError:
        raise InputError("ratio", ratio, "not an isotope ratio such as 44/40") from None
    for known in LAWS:
        if law == known:
            return ratio, known
    raise InputError("law", law, f"not a mass-dependent law: use {' or '.join(LAWS)}")


def _on_ratio(line: SpecimenResult, element: str, ratio: str, law: Law) -> SpecimenResult:
    """A δ of another ratio of the element put on ``ratio``; anything else as measured."""
    if line.kind != "delta" or line.ratio == ratio:
        return line
    if not (has_ratio(element, ratio) and has_ratio(element, line.ratio)):
        return line  # another element's δ: shown as measured, under its own ratio
    moved = convert_delta(element, line.value, line.two_sd, line.ratio, ratio, law)
    return line.model_copy(
        update={
            "ratio": ratio,
            "value": moved.value,
            "two_sd": moved.two_sd,
            "two_se": None if line.two_se is None else line.two_se * moved.slope,
            "converted_from": line.ratio,
            "law": law,
            "factor": moved.factor,
        }
    )


def _check_element(elements: set[str], ratio: str) -> None:
    """Refuse a ratio of isotopes that no element of the results listed has (any element
    known, when none is listed): nothing could be shown on it. A ratio of one element's
    isotopes leaves another element's results as measured (a loan's Sr beside its Ca)."""
    if any(has_ratio(element, ratio) for element in elements):
        return
    isotopes = "; ".join(
        f"{e} {', '.join(str(n) for n in ISOTOPE_MASS.get(e, {})) or 'none known'}"
        for e in sorted(elements)
    )
    raise InputError("ratio", ratio, f"not a ratio of the element's isotopes ({isotopes})")


def _to_specimen(query: Select[*Row]) -> Select[*Row]:
    """A query of results joined down their lineage to the specimen they were measured on."""
    return (
        query.join(Cut, Result.cut_id == Cut.id)
        .join(BatchPosition, Cut.position_id == BatchPosition.id)
        .join(Aliquot, BatchPosition.aliquot_id == Aliquot.id)
        .join(Solution, Aliquot.solution_id == Solution.id)
        .join(Powder, Solution.powder_id == Powder.id)
        .join(Specimen, Powder.specimen_id == Specimen.id)
    )


def scales(db: Database, loan: str) -> list[str]:
    """The reference scales a loan's results can be shown on, by name: each reference
    material with an accepted δ for at least one δ the loan has (its ratio, on the scale it
    was measured on), so that choosing one of them is never refused; the δ it has no value
    for are shown as measured, each saying so. None while the loan has no δ results (a ratio
    keeps no scale to change)."""
    with db.read_session() as session:
        loan_id = get_loan(session, "loan", loan).id
        measured = _to_specimen(select(Result.ratio, Result.scale).distinct()).where(
            Specimen.loan_id == loan_id, Result.kind == "delta"
        )
        needed = {(ratio, scale) for ratio, scale in session.execute(measured)}
        accepted = (
            select(ReferenceMaterial.name, ReferenceValue.ratio, ReferenceValue.scale)
            .join(ReferenceValue, ReferenceValue.reference_material_id == ReferenceMaterial.id)
            .where(ReferenceValue.kind == "delta")
        )
        known: dict[str, set[tuple[str, str]]] = {}
        for name, ratio, scale in session.execute(accepted):
            known.setdefault(name, set()).add((ratio, scale))
    return sorted(name for name, pairs in known.items() if needed & pairs)


def ratios(db: Database, loan: str) -> list[str]:
    """The ratios a loan's δ can be shown on by a mass-dependent law: those its δ were
    measured on, and the ratio its elements are usually reported on (δ44/40 for calcium,
    common practice) when that was not measured (an instrument that cannot see ⁴⁰Ca)."""
    with db.read_session() as session:
        loan_id = get_loan(session, "loan", loan).id
        measured = _to_specimen(
            select(Result.ratio, InstrumentSession.element)
            .join(InstrumentSession, Result.session_id == InstrumentSession.id)
            .distinct()
        ).where(Specimen.loan_id == loan_id, Result.kind == "delta")
        found = {(ratio, element) for ratio, element in session.execute(measured)}
    offered = {ratio for ratio, _ in found}
    offered |= {REPORTED_RATIO[e] for _, e in found if e in REPORTED_RATIO}
    return sorted(offered)


def _anchors(session: Session, scale: str) -> dict[tuple[str, str], ReferenceValue]:
    """Every accepted δ of the scale's reference material, by (ratio, scale it is on): read
    once, so converting a loan's results costs one statement however many there are."""
    try:
        rm = get_reference_material(session, "scale", scale)
    except NotFound:
        raise NotFound("scale", scale, "no reference material has this name") from None
    query = select(ReferenceValue).where(
        ReferenceValue.reference_material_id == rm.id, ReferenceValue.kind == "delta"
    )
    latest: dict[tuple[str, str], ReferenceValue] = {}
    for value in session.scalars(query.order_by(ReferenceValue.id)):
        latest[(value.ratio, value.scale)] = value  # the newest wins
    return latest


def _no_scale_value(result: Result, scale: str | None, on: str) -> list[str]:
    """The flag of a δ asked on ``scale`` but left on its own: no accepted value to convert
    it by. Empty when it was converted, or needs no conversion (its own scale, a ratio)."""
    if scale is None or on.lower() == scale.lower() or result.kind != "delta":
        return []
    return [
        f"no scale value: {scale} has no accepted δ{result.ratio} on the {result.scale} "
        f"scale; shown on {result.scale}"
    ]


def _on(line: SpecimenResult, scale: str) -> bool:
    return line.scale.lower() == scale.lower()


def _refuse_unanchored(scale: str, lines: list[SpecimenResult]) -> None:
    """Refuse a scale that none of the δ could be put on: the list would only repeat them
    as measured, each saying so."""
    needed = sorted({f"δ{x.ratio} on the {x.scale} scale" for x in lines if x.kind == "delta"})
    raise RuleViolation(
        "scale",
        scale,
        f"no accepted value of {scale} for any result here ({', '.join(needed)}); record one first",
    )


def _on_scale(
    result: Result, scale: str | None, anchors: dict[tuple[str, str], ReferenceValue]
) -> tuple[float, str, float]:
    """The value on the asked scale, that scale, and the factor spreads scale by.

    δ_new = (1 + δ/1000)/(1 + a/1000) − 1, so spreads scale by 1/(1 + a/1000) exactly.
    A δ whose ratio the scale's reference has no accepted value for, on the scale it was
    measured on, stays on that scale (``_no_scale_value`` says so on its line).
    """
    if scale is None or scale.lower() == result.scale.lower() or result.kind != "delta":
        return result.delta_permil, result.scale, 1.0
    anchor = anchors.get((result.ratio, result.scale))
    if anchor is None:
        return result.delta_permil, result.scale, 1.0
    factor = 1 / (1 + anchor.value / 1000)
    return change_scale(result.delta_permil, invert(anchor.value)), scale, factor


class NewReferenceValue(Request):
    reference: Name
    ratio: Annotated[str, Field(pattern=r"^\d{1,3}/\d{1,3}$")]
    scale: Name
    value: float
    two_sd: Annotated[float, Field(gt=0)]
    kind: Literal["delta", "ratio"] = "delta"
    source: Annotated[str, Field(min_length=3, max_length=500)]

    @model_validator(mode="after")
    def _ratio_above_zero(self) -> NewReferenceValue:
        if self.kind == "ratio" and self.value <= 0:
            raise FieldProblem("value", self.value, "an isotope ratio must be above zero")
        return self


class ReferenceValueView(View):
    reference: str
    ratio: str
    scale: str
    kind: str
    value: float
    two_sd: float
    source: str


def set_reference_value(
    db: Database, actor: str | None, data: NewReferenceValue | Raw
) -> Done[ReferenceValueView]:
    """Record the accepted value (and tolerance) of a reference material; managers only."""
    request = parse(NewReferenceValue, data)
    with unit_of_work(db, actor) as uow:
        uow.require_manager("setting an accepted reference value")
        material = get_reference_material(uow.session, "reference", request.reference)
        row = ReferenceValue(
            reference_material_id=material.id,
            ratio=request.ratio,
            scale=request.scale,
            kind=request.kind,
            value=request.value,
            two_sd=request.two_sd,
            source=request.source,
            recorded_by=uow.operator.code,
            created_at=uow.now,
        )
        uow.session.add(row)
        view = ReferenceValueView(
            reference=material.name, **request.model_dump(exclude={"reference"})
        )
        return finish(uow, "reference.value_set", material, request.model_dump(), lambda: view)
