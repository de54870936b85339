"""The lab's record of its reference materials across sessions: control charts, the
long-term 2SD every result is reported with at least, and the sessions whose reference
material fell outside the lab's long-term limits (``domain.reproducibility`` has the rules).

Read side only: computed from the stored results each time, so a session reduced again or a
value corrected shows at once, and nothing is kept that could disagree with the results.
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass, field
from datetime import date

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.errors import InputError
from tracker.domain.models import InstrumentSession, ReferenceMaterial, ReferenceValue, Result
from tracker.domain.reproducibility import MIN_SESSIONS, judged_by_the_others, long_term
from tracker.services.core.lookup import get_reference_material
from tracker.services.core.views import View

Method = tuple[str, str, str]  # ratio, scale, kind (δ or ratio): what a 2SD is comparable within


class ControlPoint(View):
    session: str
    day: date
    value: float
    two_sd: float | None  # the session's own spread of the material's runs
    n: int
    others_mean: float | None  # the other sessions' mean and 2SD, the limits this one is judged by
    others_two_sd: float | None
    within: bool | None  # None while fewer than MIN_SESSIONS other sessions


class ControlChart(View):
    reference: str
    ratio: str
    scale: str
    kind: str
    accepted: float | None
    accepted_two_sd: float | None
    long_term_mean: float | None
    long_term_two_sd: float | None
    min_sessions: int
    points: list[ControlPoint]


class ChartChoice(View):
    """One control chart there is something to draw on: a material, ratio and scale."""

    reference: str
    ratio: str
    scale: str
    kind: str
    sessions: int


def charts(db: Database) -> list[ChartChoice]:
    """Every (reference material, ratio, scale) with results, by material name then ratio,
    with how many sessions measured it: what a person can ask ``control_chart`` for."""
    query = (
        select(
            ReferenceMaterial.name,
            Result.ratio,
            Result.scale,
            Result.kind,
            func.count(Result.session_id.distinct()),
        )
        .join(ReferenceMaterial, Result.reference_material_id == ReferenceMaterial.id)
        .group_by(ReferenceMaterial.name, Result.ratio, Result.scale, Result.kind)
        .order_by(ReferenceMaterial.name, Result.ratio, Result.scale, Result.kind)
    )
    with db.read_session() as sql:
        return [
            ChartChoice(reference=name, ratio=ratio, scale=scale, kind=kind, sessions=sessions)
            for name, ratio, scale, kind, sessions in sql.execute(query)
        ]


def control_chart(
    db: Database, reference: str, ratio: str, scale: str | None = None
) -> ControlChart:
    """Every session's mean of ``reference`` on ``ratio`` (and ``scale``: needed only when
    the material was measured on several), oldest first, each judged by the others."""
    with db.read_session() as sql:
        material = get_reference_material(sql, "reference", reference)
        scale = _scale(sql, material, ratio, scale)
        query = (
            select(Result, InstrumentSession)
            .join(InstrumentSession, Result.session_id == InstrumentSession.id)
            .where(
                Result.reference_material_id == material.id,
                Result.ratio == ratio,
                Result.scale == scale,
            )
            .order_by(InstrumentSession.started_at, InstrumentSession.id)
        )
        rows = [(result, run) for result, run in sql.execute(query)]
        accepted = _accepted(sql, material.id, ratio, scale)
        kind = rows[0][0].kind if rows else "delta"
    means = [result.delta_permil for result, _ in rows]
    overall = long_term(means)
    points = [
        ControlPoint(
            session=run.public_id,
            day=run.started_at.date(),
            value=result.delta_permil,
            two_sd=None if result.sd_permil is None else 2 * result.sd_permil,
            n=result.n,
            others_mean=None if others is None else others.mean,
            others_two_sd=None if others is None else others.two_sd,
            within=within,
        )
        for (result, run), (others, within) in zip(rows, judged_by_the_others(means), strict=True)
    ]
    return ControlChart(
        reference=material.name,
        ratio=ratio,
        scale=scale,
        kind=kind,
        accepted=None if accepted is None else accepted.value,
        accepted_two_sd=None if accepted is None else accepted.two_sd,
        long_term_mean=None if overall is None else overall.mean,
        long_term_two_sd=None if overall is None else overall.two_sd,
        min_sessions=MIN_SESSIONS,
        points=points,
    )


def _scale(sql: Session, material: ReferenceMaterial, ratio: str, scale: str | None) -> str:
    """The scale asked for, or the only one the material was measured on for ``ratio``."""
    measured = sorted(
        sql.scalars(
            select(Result.scale)
            .where(Result.reference_material_id == material.id, Result.ratio == ratio)
            .distinct()
        )
    )
    if scale is not None:
        return scale
    if len(measured) == 1:
        return measured[0]
    if not measured:
        raise InputError("ratio", ratio, f"{material.name} has no results on this ratio")
    raise InputError(
        "scale", None, f"{material.name} was measured on {', '.join(measured)}: name one"
    )


def _accepted(sql: Session, material_id: int, ratio: str, scale: str) -> ReferenceValue | None:
    """The material's accepted value in force on this ratio and scale (the latest recorded)."""
    query = (
        select(ReferenceValue)
        .where(
            ReferenceValue.reference_material_id == material_id,
            ReferenceValue.ratio == ratio,
            ReferenceValue.scale == scale,
        )
        .order_by(ReferenceValue.id.desc())
        .limit(1)
    )
    return sql.scalars(query).first()


@dataclass
class LabRecord:
    """What results are reported with: per method, the largest long-term 2SD among the
    reference materials measured on it; per session, its reference materials found outside
    the limits the other sessions set."""

    two_sd: dict[Method, float] = field(default_factory=dict)
    outside: dict[int, list[str]] = field(default_factory=lambda: defaultdict(list))


def lab_record(sql: Session) -> LabRecord:
    """Read every reference-material result once (one statement) and judge them."""
    query = (
        select(
            Result.reference_material_id,
            ReferenceMaterial.name,
            Result.ratio,
            Result.scale,
            Result.kind,
            Result.session_id,
            Result.delta_permil,
        )
        .join(ReferenceMaterial, Result.reference_material_id == ReferenceMaterial.id)
        .join(InstrumentSession, Result.session_id == InstrumentSession.id)
        .order_by(InstrumentSession.started_at, InstrumentSession.id)
    )
    series: dict[tuple[int | None, str, str, str, str], list[tuple[int, float]]] = defaultdict(list)
    for material, name, ratio, scale, kind, session, value in sql.execute(query):
        series[(material, name, ratio, scale, kind)].append((session, value))
    record = LabRecord()
    for (_, name, ratio, scale, kind), points in series.items():
        means = [value for _, value in points]
        overall = long_term(means)
        if overall is not None:
            method = (ratio, scale, kind)
            record.two_sd[method] = max(record.two_sd.get(method, 0.0), overall.two_sd)
        for (session, _), (_, within) in zip(points, judged_by_the_others(means), strict=True):
            if within is False:
                record.outside[session].append(f"{name} {ratio_name(kind, ratio)}")
    return record


def ratio_name(kind: str, ratio: str) -> str:
    """How a ratio is written: ``δ44/40`` for a δ, the bare ratio otherwise."""
    return f"δ{ratio}" if kind == "delta" else ratio


def session_flag(names: list[str]) -> str:
    """The flag every result of a session carries when its reference materials were out."""
    return (
        f"reference material outside the lab's long-term limits in this session: {', '.join(names)}"
    )
