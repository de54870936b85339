"""Reducing an instrument session: bracketed δ per run, replicate statistics, QC flags.

Each sample, reference-material and blank run is divided by the mean of the bracketing
standard runs just before and after it (δ mode) or scaled to the standard's accepted
ratio (ratio mode, e.g. ⁸⁷Sr/⁸⁶Sr normalised to the standard). Runs of one target are
then averaged: mean, SD, 2SD, 2SE, n. Reference materials are checked against their
accepted value within the lab's long-term 2SD; a failure flags the whole session.
Where two ratios share an isotope (44/40 and 44/42), every target is checked for
mass-dependent consistency under the exponential law, from its runs' paired residuals
(so the correlation of two ratios sharing an isotope is counted), or from a single run's
internal errors.
"""

from __future__ import annotations

from bisect import bisect_left, bisect_right
from collections import defaultdict
from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import datetime
from itertools import combinations

from sqlalchemy import select
from sqlalchemy.orm import Session, joinedload

from tracker.db.database import Database
from tracker.domain import precision
from tracker.domain.delta import (
    Replicates,
    blank_corrected,
    bracketed_delta,
    bracketed_delta_u,
    replicate_stats,
)
from tracker.domain.errors import RuleViolation
from tracker.domain.ids import Kind, format_id
from tracker.domain.isotopes import (
    Departure,
    departure_of_one_run,
    departure_of_replicates,
    exponential_factor,
    parse_ratio,
)
from tracker.domain.models import (
    Aliquot,
    BatchPosition,
    ColumnBatch,
    Cut,
    InstrumentSession,
    Measurement,
    MeasurementRole,
    Powder,
    ReferenceMaterial,
    ReferenceValue,
    Result,
    Solution,
)
from tracker.domain.models.instrument import RECOMPUTED
from tracker.services.bench.columns import blank_ng, position_flags
from tracker.services.core.common import finish
from tracker.services.core.inputs import Raw, Request, parse
from tracker.services.core.lookup import get_by_id
from tracker.services.core.uow import unit_of_work
from tracker.services.core.views import Done, View

Target = tuple[str, int]  # ("cut" | "reference" | "blank", row id)


class ResultLine(View):
    target: str  # cut, reference or blank position ID
    kind: str  # sample, reference, blank
    label: str
    ratio: str
    value: float
    sd: float | None
    two_sd: float | None
    two_se: float | None
    n: int
    accepted: float | None = None
    accepted_two_sd: float | None = None
    passed: bool | None = None
    blank_corrected: bool = False
    flags: list[str]


class Reduction(View):
    session: str
    name: str
    mode: str
    scale: str
    results: list[ResultLine]
    flags: list[str]
    unmatched: int


class Reduce(Request):
    session: str


def reduce_session(db: Database, actor: str | None, data: Reduce | Raw) -> Done[Reduction]:
    """Compute (again) every result of a session; earlier results of it are replaced."""
    request = parse(Reduce, data)
    with unit_of_work(db, actor) as uow:
        session = get_by_id(uow.session, InstrumentSession, "session", request.session)
        answer = recompute(uow.session, session, uow.now)
        payload = {
            "results": len(answer.results),
            "flags": answer.flags,
            "failed": [f"{x.label} {x.ratio}" for x in answer.results if x.passed is False],
        }
        return finish(uow, "session.reduced", session, payload, lambda: answer)


def recompute(sql: Session, session: InstrumentSession, now: datetime) -> Reduction:
    """Replace a session's results with ones computed from the values now in force.

    Part of a unit of work (a reduction, or a correction of a value results depend on);
    the caller records the one custody event.
    """
    runs = [m for m in session.measurements if m.excluded_reason is None]
    accepted = load_targets(
        sql,
        session,
        {m.cut_id for m in runs if m.role is MeasurementRole.SAMPLE and m.cut_id},
        {m.reference_material_id for m in runs if m.reference_material_id},
    )
    lines: list[ResultLine] = []
    rows: list[Result] = []
    measured: dict[tuple[str, str], _Runs] = {}
    for ratio in session.ratio_names:
        for target, runs_of in _replicates(session, runs, ratio).items():
            line, row = _result(sql, session, ratio, target, runs_of.stats, now, accepted)
            lines.append(line)
            rows.append(row)
            measured[(line.target, ratio)] = runs_of
    _mass_dependence(session, lines, measured)
    flags = sorted(
        {f"reference material failed: {x.label} {x.ratio}" for x in lines if x.passed is False}
    )
    for line, row in zip(lines, rows, strict=True):
        row.flags = list(line.flags)
    _store(sql, session, rows)
    session.flags = flags
    unmatched = sum(1 for m in session.measurements if m.role is MeasurementRole.UNMATCHED)
    return Reduction(
        session=session.public_id,
        name=session.name,
        mode=session.mode,
        scale=session.bracketing_standard,
        results=lines,
        flags=flags,
        unmatched=unmatched,
    )


def _store(sql: Session, session: InstrumentSession, rows: list[Result]) -> None:
    """Write the computed rows: a target's stored row again in place, a new target's added.

    Results are never deleted (a workstation login may delete nothing). The runs of a
    session never change, so a reduction computes the same targets every time.
    """
    stored = {
        _target_of(row): row
        for row in sql.scalars(select(Result).where(Result.session_id == session.id))
    }
    for row in rows:
        kept = stored.pop(_target_of(row), None)
        if kept is None:
            sql.add(row)
            continue
        for column in RECOMPUTED:
            setattr(kept, column, getattr(row, column))
    if stored:
        raise RuleViolation(
            "session",
            session.public_id,
            f"{len(stored)} stored result(s) no longer have runs to be computed from; "
            "nothing was changed",
        )


def _target_of(row: Result) -> tuple[int | None, int | None, int | None, str]:
    return row.cut_id, row.reference_material_id, row.position_id, row.ratio


@dataclass
class _Runs:
    """One target's runs on one ratio: each run's value, its order in the session and, when
    the export gives internal errors, the standard uncertainty of its δ."""

    values: list[float] = field(default_factory=list)
    orders: list[int] = field(default_factory=list)
    internal: list[float | None] = field(default_factory=list)

    @property
    def stats(self) -> Replicates:
        return replicate_stats(self.values)


def _replicates(
    session: InstrumentSession, runs: list[Measurement], ratio: str
) -> dict[Target, _Runs]:
    standards: list[Standard] = sorted(
        (m.run_order, m.ratios[ratio], _u(m, ratio))
        for m in runs
        if m.role is MeasurementRole.STANDARD
    )
    order = [run for run, _, _ in standards]  # searched, never scanned, for each run's neighbours
    found: dict[Target, _Runs] = defaultdict(_Runs)
    for m in runs:
        target = _target(m)
        if target is None:
            continue
        before, after = bisect_left(order, m.run_order), bisect_right(order, m.run_order)
        if before == 0 or after == len(order):
            raise RuleViolation(
                "session",
                session.public_id,
                f"run {m.run_order} ({m.sample_name}) lost its bracketing "
                "standard (an excluded standard run?)",
            )
        neighbours = standards[before - 1], standards[after]
        sample = m.ratios[ratio]
        runs_of = found[target]
        runs_of.values.append(_value(session, ratio, sample, neighbours[0][1], neighbours[1][1]))
        runs_of.orders.append(m.run_order)
        runs_of.internal.append(_internal_u(session, sample, _u(m, ratio), *neighbours))
    return dict(found)


Standard = tuple[int, float, float | None]  # a standard run: its order, ratio and uncertainty


def _internal_u(
    session: InstrumentSession, sample: float, u: float | None, before: Standard, after: Standard
) -> float | None:
    """The standard uncertainty of a run's bracketed δ from the internal errors of the run
    and of its two standards; None in ratio mode or when any of them was not given."""
    _, r_before, u_before = before
    _, r_after, u_after = after
    if session.mode != "delta" or u is None or u_before is None or u_after is None:
        return None
    return bracketed_delta_u(sample, u, r_before, u_before, r_after, u_after)


def _u(m: Measurement, ratio: str) -> float | None:
    """A run's internal standard uncertainty of ``ratio``: half its internal 2SE, if given."""
    two_se = m.errors.get(ratio)
    return None if two_se is None else float(two_se) / 2


def _value(
    session: InstrumentSession, ratio: str, sample: float, before: float, after: float
) -> float:
    if session.mode == "ratio":
        return sample / ((before + after) / 2) * float(session.standard_values[ratio])
    return bracketed_delta(sample, before, after)


def _target(m: Measurement) -> Target | None:
    if m.role is MeasurementRole.SAMPLE and m.cut_id is not None:
        return "cut", m.cut_id
    if m.role is MeasurementRole.REFERENCE and m.reference_material_id is not None:
        return "reference", m.reference_material_id
    if m.role is MeasurementRole.BLANK and m.position_id is not None:
        return "blank", m.position_id
    return None


def _result(
    sql: Session,
    session: InstrumentSession,
    ratio: str,
    target: Target,
    stats: Replicates,
    now: datetime,
    accepted_values: dict[tuple[int, str], ReferenceValue],
) -> tuple[ResultLine, Result]:
    kind, key = target
    value, corrected, flags = stats.mean, False, []
    row = Result(
        session_id=session.id,
        ratio=ratio,
        scale=session.bracketing_standard,
        kind=session.mode,
        n=stats.n,
        sd_permil=stats.sd,
        two_se_permil=stats.two_se,
        delta_permil=value,
        flags=[],
        created_at=now,
    )
    accepted: ReferenceValue | None = None
    if kind == "cut":
        cut = sql.get_one(Cut, key)
        row.cut_id, label = key, cut_label(cut)
        value, corrected = _blank_correct(cut, ratio, value)
        flags = position_flags(cut.position)
    elif kind == "reference":
        material = sql.get_one(ReferenceMaterial, key)
        row.reference_material_id, label = key, material.name
        accepted = accepted_values.get((key, ratio))
    else:
        row.position_id, label = key, f"procedural blank {key}"
    if stats.n == 1:
        flags.append("single run")
    row.delta_permil, row.blank_corrected = value, corrected
    passed = None if accepted is None else abs(value - accepted.value) <= accepted.two_sd
    line = ResultLine(
        target=public_target(kind, key),
        kind=TARGET_KINDS[kind],
        label=label,
        ratio=ratio,
        value=value,
        sd=stats.sd,
        two_sd=stats.two_sd,
        two_se=stats.two_se,
        n=stats.n,
        accepted=accepted.value if accepted else None,
        accepted_two_sd=accepted.two_sd if accepted else None,
        passed=passed,
        blank_corrected=corrected,
        flags=flags + (["failed acceptance"] if passed is False else []),
    )
    return line, row


TARGET_KINDS = {"cut": "sample", "reference": "reference", "blank": "blank"}


def public_target(kind: str, key: int) -> str:
    """The public ID of a reduced target (a cut, a reference material, a blank's column)."""
    return format_id(_IDTARGET_KINDS[kind], key)


_IDTARGET_KINDS = {"cut": Kind.CUT, "reference": Kind.REFERENCE_MATERIAL, "blank": Kind.POSITION}


def cut_label(cut: Cut) -> str:
    """How a result names its cut: the specimen's catalogue number and ID."""
    aliquot = cut.position.aliquot
    if aliquot is None:
        return cut.public_id
    specimen = aliquot.solution.powder.specimen
    return f"{specimen.catalog_number} ({specimen.public_id})"


def _blank_correct(cut: Cut, ratio: str, value: float) -> tuple[float, bool]:
    """Mass-balance blank correction when the batch knows its blank's δ for this ratio."""
    batch: ColumnBatch = cut.position.batch
    blank, _, _ = blank_ng(batch)
    if ratio not in batch.blank_deltas or blank is None or not cut.recovered_ug:
        return value, False
    sample_ng = float(cut.recovered_ug) * 1000 - blank
    return blank_corrected(value, sample_ng, float(batch.blank_deltas[ratio]), blank), True


def load_targets(
    sql: Session, session: InstrumentSession, cut_ids: set[int], material_ids: set[int]
) -> dict[tuple[int, str], ReferenceValue]:
    """Load what the results read, in a fixed number of statements however many runs.

    Every cut measured comes with its column, its batch's positions and cuts (the blank and
    the batch's flags) and the specimen it came from; every reference material with the
    accepted value in force on the session's scale, per ratio (the latest recorded).
    """
    batch = joinedload(Cut.position).joinedload(BatchPosition.batch)
    specimen = (
        joinedload(Cut.position)
        .joinedload(BatchPosition.aliquot)
        .joinedload(Aliquot.solution)
        .joinedload(Solution.powder)
        .joinedload(Powder.specimen)
    )
    for chunk in _chunks(sorted(cut_ids)):
        query = select(Cut).where(Cut.id.in_(chunk))
        siblings = batch.selectinload(ColumnBatch.positions).selectinload(BatchPosition.cuts)
        sql.scalars(query.options(siblings, specimen)).unique().all()
    accepted: dict[tuple[int, str], ReferenceValue] = {}
    for chunk in _chunks(sorted(material_ids)):
        sql.scalars(select(ReferenceMaterial).where(ReferenceMaterial.id.in_(chunk))).all()
        values = select(ReferenceValue).where(
            ReferenceValue.reference_material_id.in_(chunk),
            ReferenceValue.scale == session.bracketing_standard,
            ReferenceValue.kind == session.mode,
        )
        for value in sql.scalars(values.order_by(ReferenceValue.id)):
            accepted[(value.reference_material_id, value.ratio)] = value  # the latest wins
    return accepted


def _chunks(ids: list[int], size: int = 500) -> list[list[int]]:
    """IDs in lists short enough for every backend's limit on parameters."""
    return [ids[start : start + size] for start in range(0, len(ids), size)]


@dataclass(frozen=True)
class _Pair:
    a: str
    b: str
    k: float


def _pairs(element: str, ratios: Iterable[str]) -> list[_Pair]:
    found = []
    for a, b in combinations(ratios, 2):
        if set(parse_ratio(a)) & set(parse_ratio(b)):
            k = exponential_factor(element, a, b)
            found.append(_Pair(a, b, k) if abs(k) >= 1 else _Pair(b, a, 1 / k))
    return found


def _mass_dependence(
    session: InstrumentSession, lines: list[ResultLine], measured: dict[tuple[str, str], _Runs]
) -> None:
    """Flag targets whose two ratios disagree with mass-dependent fractionation: from the
    runs' paired residuals (their covariance included), or a single run's internal errors."""
    if session.mode != "delta":
        return
    by_target: dict[str, dict[str, ResultLine]] = defaultdict(dict)
    for line in lines:
        by_target[line.target][line.ratio] = line
    for pair in _pairs(session.element, session.ratio_names):
        for target, pairs in by_target.items():
            a, b = pairs.get(pair.a), pairs.get(pair.b)
            if a is None or b is None:
                continue
            found = _departure(measured[(target, pair.a)], measured[(target, pair.b)], pair.k)
            if found is not None and found.significant:
                interval = precision.delta(found.residual, found.coverage * found.se)
                pairing = f"{pair.a} vs {pair.b}"
                note = f"mass-dependence off ({pairing}: {interval}, 95 %, from {found.basis})"
                a.flags.append(note)
                b.flags.append(note)


def _departure(a: _Runs, b: _Runs, k: float) -> Departure | None:
    """The departure of δa from the law, from the runs that measured both ratios."""
    b_of = dict(zip(b.orders, zip(b.values, b.internal, strict=True), strict=True))
    paired = [
        (value, u, *b_of[order])
        for order, value, u in zip(a.orders, a.values, a.internal, strict=True)
        if order in b_of
    ]
    if len(paired) == 1:
        a_value, u_a, b_value, u_b = paired[0]
        if u_a is None or u_b is None:
            return None
        return departure_of_one_run(a_value, u_a, b_value, u_b, k)
    return departure_of_replicates([p[0] for p in paired], [p[2] for p in paired], k)
