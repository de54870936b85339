"""Read-only listings that entry points browse: column batches, instrument sessions and
reference materials. Nothing here writes or decides a rule."""

from __future__ import annotations

from datetime import date, datetime
from typing import Any

from sqlalchemy import Select, func, select
from sqlalchemy.orm import selectinload

from tracker.db.database import Database
from tracker.domain.ids import Kind, format_id
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
    Result,
    Solution,
    Specimen,
)
from tracker.services.core.lookup import get_by_id, open_loan_ids
from tracker.services.core.views import View


class BatchLine(View):
    id: str
    name: str
    element: str
    performed_on: date
    positions: int
    cut_names: list[str]


def list_batches(db: Database) -> list[BatchLine]:
    """Column batches, newest first."""
    with db.read_session() as session:
        rows = session.scalars(
            select(ColumnBatch)
            .options(selectinload(ColumnBatch.positions))
            .order_by(ColumnBatch.performed_on.desc(), ColumnBatch.id.desc())
        )
        return [
            BatchLine(
                id=b.public_id,
                name=b.name,
                element=b.element,
                performed_on=b.performed_on,
                positions=sum(p.in_batch for p in b.positions),
                cut_names=list(b.cut_names),
            )
            for b in rows
        ]


class SessionLine(View):
    id: str
    name: str
    element: str
    instrument: str
    started_at: datetime
    runs: int
    unmatched: int
    results: int
    flags: list[str]


def list_sessions(db: Database) -> list[SessionLine]:
    """Instrument sessions, newest first, with their run, unmatched and result counts."""
    with db.read_session() as session:
        count = func.count()
        runs = _counts(
            session.execute(select(Measurement.session_id, count).group_by(Measurement.session_id))
        )
        unmatched = _counts(
            session.execute(
                select(Measurement.session_id, count)
                .where(Measurement.role == MeasurementRole.UNMATCHED)
                .group_by(Measurement.session_id)
            )
        )
        results = _counts(
            session.execute(select(Result.session_id, count).group_by(Result.session_id))
        )
        rows = session.scalars(
            select(InstrumentSession).order_by(
                InstrumentSession.started_at.desc(), InstrumentSession.id.desc()
            )
        )
        return [
            SessionLine(
                id=s.public_id,
                name=s.name,
                element=s.element,
                instrument=s.instrument,
                started_at=s.started_at,
                runs=runs.get(s.id, 0),
                unmatched=unmatched.get(s.id, 0),
                results=results.get(s.id, 0),
                flags=list(s.flags),
            )
            for s in rows
        ]


def _counts(rows: Any) -> dict[int, int]:
    return {int(key): int(value) for key, value in rows}


class MaterialLine(View):
    id: str
    name: str
    element: str
    matrix: str | None


def list_reference_materials(db: Database, element: str | None = None) -> list[MaterialLine]:
    """Reference materials and bracketing standards, optionally of one element."""
    with db.read_session() as session:
        query = select(ReferenceMaterial).order_by(ReferenceMaterial.name)
        if element:
            query = query.where(ReferenceMaterial.element == element)
        return [
            MaterialLine(id=r.public_id, name=r.name, element=r.element, matrix=r.matrix)
            for r in session.scalars(query)
        ]


def batch_of_position(db: Database, position: str) -> str:
    """The batch a column position belongs to (its public ID)."""
    with db.read_session() as session:
        return get_by_id(session, BatchPosition, "position", position).batch.public_id


def results_missing_counts(db: Database, *, open_only: bool = False) -> dict[str, int]:
    """Per loan (its public ID): how many sampled specimens have no result yet.

    One grouped statement: the overview shows only the count, and listing every specimen's
    ID (thousands of rows at a busy lab) would be read and formatted on each start.
    With ``open_only``, only the open loans' specimens are looked at.
    """
    query = _results_missing_statement(open_only=open_only)
    with db.read_session() as session:
        return {format_id(Kind.LOAN, loan): int(n) for loan, n in session.execute(query)}


def _results_missing_statement(*, open_only: bool) -> Select[int, int]:
    """(loan id, sampled specimens with no result yet) per loan."""
    drilled = select(Powder.id).where(Powder.specimen_id == Specimen.id)
    measured = (
        select(Result.id)
        .join(Cut, Cut.id == Result.cut_id)
        .join(BatchPosition, BatchPosition.id == Cut.position_id)
        .join(Aliquot, Aliquot.id == BatchPosition.aliquot_id)
        .join(Solution, Solution.id == Aliquot.solution_id)
        .join(Powder, Powder.id == Solution.powder_id)
        .where(Powder.specimen_id == Specimen.id)
    )
    query = (
        select(Specimen.loan_id, func.count())
        .where(drilled.exists(), ~measured.exists())
        .group_by(Specimen.loan_id)
    )
    if open_only:
        query = query.where(Specimen.loan_id.in_(open_loan_ids()))
    return query
