"""The overview's "results missing: N" flag counts, in one statement, what a plain reading
of the demo finds specimen by specimen: drilled (a powder exists) and no result reached it
through solution, aliquot, column position and cut."""

from __future__ import annotations

from sqlalchemy import select

from tests.ui.conftest import Lab
from tracker.domain.ids import Kind, format_id
from tracker.domain.models import (
    Aliquot,
    BatchPosition,
    Cut,
    Loan,
    LoanStatus,
    Powder,
    Result,
    Solution,
    Specimen,
)
from tracker.services.read import browse


def _missing_one_by_one(lab: Lab) -> tuple[dict[str, int], int]:
    db = lab.open()
    try:
        with db.read_session() as session:
            measured: set[int] = set()
            for result in session.scalars(select(Result).where(Result.cut_id.is_not(None))):
                cut = session.get_one(Cut, result.cut_id)
                position = session.get_one(BatchPosition, cut.position_id)
                if position.aliquot_id is None:
                    continue
                aliquot = session.get_one(Aliquot, position.aliquot_id)
                solution = session.get_one(Solution, aliquot.solution_id)
                measured.add(session.get_one(Powder, solution.powder_id).specimen_id)
            missing: dict[str, int] = {}
            for specimen in session.scalars(select(Specimen)):
                drilled = session.scalars(
                    select(Powder.id).where(Powder.specimen_id == specimen.id)
                ).first()
                if drilled is not None and specimen.id not in measured:
                    loan = format_id(Kind.LOAN, specimen.loan_id)
                    missing[loan] = missing.get(loan, 0) + 1
            return missing, len(measured)
    finally:
        db.close()


def test_results_missing_counts_match_a_specimen_by_specimen_reading(lab: Lab) -> None:
    expected, measured = _missing_one_by_one(lab)
    assert measured > 0 and sum(expected.values()) > 0  # the demo has both kinds
    db = lab.open()
    try:
        assert browse.results_missing_counts(db) == expected
        with db.read_session() as session:
            open_loans = {
                format_id(Kind.LOAN, n)
                for n in session.scalars(select(Loan.id).where(Loan.status == LoanStatus.OPEN))
            }
        assert browse.results_missing_counts(db, open_only=True) == {
            loan: n for loan, n in expected.items() if loan in open_loans
        }
    finally:
        db.close()
