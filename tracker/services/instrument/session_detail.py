"""A session as it stands: its runs, the rows the import could not match, and the results its
last reduction stored, reference materials judged as the reduction judged them.

Read-only; what a session's screen and ``tracker session show`` read. The reduction itself is
:mod:`tracker.services.instrument.reduction`.
"""

from __future__ import annotations

import json
from datetime import datetime

from sqlalchemy import select
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.models import (
    CustodyEvent,
    Cut,
    InstrumentSession,
    MeasurementRole,
    ReferenceMaterial,
    ReferenceValue,
    Result,
)
from tracker.services.core.lookup import get_by_id
from tracker.services.core.views import View
from tracker.services.instrument.reduction import (
    TARGET_KINDS,
    ResultLine,
    cut_label,
    load_targets,
    public_target,
)


class UnmatchedLine(View):
    run_order: int
    sample_name: str
    reason: str


class SessionDetail(View):
    """One instrument session as stored: what was read, what matched, its latest results."""

    id: str
    name: str
    instrument: str
    element: str
    mode: str
    standard: str
    started_at: datetime
    source_filename: str | None
    profile: str | None
    ratios: list[str]
    measurements: int
    standards: int
    unmatched: list[UnmatchedLine]
    results: list[ResultLine]
    flags: list[str]
    reduced: bool
    matched_since_reduced: bool = False  # rows matched after the stored results: reduce again


def session_detail(db: Database, ref: str) -> SessionDetail:
    """Read-only: the session's runs, its unmatched rows (with the import's reasons) and the
    results its last reduction stored, reference materials judged as the reduction judged them."""
    with db.read_session() as sql:
        session = get_by_id(sql, InstrumentSession, "session", ref)
        reasons, stale = _reasons_and_staleness(sql, session.public_id)
        unmatched = [
            UnmatchedLine(
                run_order=m.run_order,
                sample_name=m.sample_name,
                reason=reasons.get(m.run_order, "not matched"),
            )
            for m in sorted(session.measurements, key=lambda m: m.run_order)
            if m.role is MeasurementRole.UNMATCHED
        ]
        rows = sql.scalars(
            select(Result).where(Result.session_id == session.id).order_by(Result.id)
        ).all()
        accepted = load_targets(
            sql,
            session,
            {row.cut_id for row in rows if row.cut_id is not None},
            {row.reference_material_id for row in rows if row.reference_material_id is not None},
        )
        lines = [_stored_line(sql, row, accepted) for row in rows]
        return SessionDetail(
            id=session.public_id,
            name=session.name,
            instrument=session.instrument,
            element=session.element,
            mode=session.mode,
            standard=session.bracketing_standard,
            started_at=session.started_at,
            source_filename=session.source_filename,
            profile=session.profile_name,
            ratios=list(session.ratio_names),
            measurements=len(session.measurements),
            standards=sum(m.role is MeasurementRole.STANDARD for m in session.measurements),
            unmatched=unmatched,
            results=lines,
            flags=list(session.flags),
            reduced=bool(lines),
            matched_since_reduced=bool(lines) and stale,
        )


# The events of a session that say why its rows are unmatched, or that its results are stale.
_REASONS = ("session.imported", "session.rows_matched")
_MATCHED = ("session.row_matched", "session.rows_matched")


def _reasons_and_staleness(sql: Session, public_id: str) -> tuple[dict[int, str], bool]:
    """Why each unmatched row is unmatched (the import's reason, or the latest matching by
    name's), and whether a row was matched after the session was last reduced."""
    found = sql.scalars(
        select(CustodyEvent)
        .where(
            CustodyEvent.object_ref == public_id,
            CustodyEvent.action.in_((*_REASONS, *_MATCHED, "session.reduced")),
        )
        .order_by(CustodyEvent.seq)
    )
    reasons: dict[int, str] = {}
    stale = False
    for event in found:
        stale = event.action in _MATCHED or (stale and event.action != "session.reduced")
        if event.action in _REASONS:
            payload = json.loads(event.payload)
            reasons |= {int(u["run_order"]): str(u["reason"]) for u in payload.get("unmatched", [])}
    return reasons, stale


def _stored_line(
    sql: Session, row: Result, accepted_values: dict[tuple[int, str], ReferenceValue]
) -> ResultLine:
    accepted: ReferenceValue | None = None
    if row.cut_id is not None:
        kind, key, label = "cut", row.cut_id, cut_label(sql.get_one(Cut, row.cut_id))
    elif row.reference_material_id is not None:
        material = sql.get_one(ReferenceMaterial, row.reference_material_id)
        kind, key, label = "reference", material.id, material.name
        accepted = accepted_values.get((material.id, row.ratio))
    else:
        key = row.position_id or 0
        kind, label = "blank", f"procedural blank {key}"
    passed = None if accepted is None else abs(row.delta_permil - accepted.value) <= accepted.two_sd
    sd = row.sd_permil
    return ResultLine(
        target=public_target(kind, key),
        kind=TARGET_KINDS[kind],
        label=label,
        ratio=row.ratio,
        value=row.delta_permil,
        sd=sd,
        two_sd=None if sd is None else 2 * sd,
        two_se=row.two_se_permil,
        n=row.n,
        accepted=accepted.value if accepted else None,
        accepted_two_sd=accepted.two_sd if accepted else None,
        passed=passed,
        blank_corrected=row.blank_corrected,
        flags=list(row.flags),
    )
