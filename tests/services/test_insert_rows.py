"""`insert_rows` writes exactly what SQLAlchemy's own insert writes, on SQLite and PostgreSQL.

The driver-level path skips SQLAlchemy's per-row bookkeeping; these tests hold it to the
same stored values (JSON, enums, UTC timestamps, NULLs) and to refusing a row set that
leaves a defaulted column out.
"""

from __future__ import annotations

from collections.abc import Callable
from datetime import UTC, datetime
from typing import Any

import pytest
from sqlalchemy import insert, select

from tests import factories as make
from tracker.db.database import Database
from tracker.db.rows import insert_rows
from tracker.domain.models import Loan, Specimen, SpecimenStatus

TABLE = Specimen.metadata.tables["specimen"]
WHEN = datetime(2026, 3, 4, 5, 6, 7, 891011, tzinfo=UTC)


def _rows(prefix: str) -> list[dict[str, Any]]:
    return [
        {
            "catalog_number": f"{prefix} 1",
            "extra": {"fieldNumber": "F-1", "n": 2},
            "locality": "Quarry (invented)",
            "age_min_ma": 1.25,
            "age_max_ma": None,
        },
        {
            "catalog_number": f"{prefix} 2",
            "extra": {},
            "locality": None,
            "age_min_ma": None,
            "age_max_ma": 4600.0,
        },
    ]


def _new_loan(db: Database) -> int:
    reference = make.loan(db)
    with db.read_session() as session:
        return session.scalars(select(Loan.id).where(Loan.reference == reference)).one()


def _stored(db: Database, loan_id: int) -> list[tuple[Any, ...]]:
    columns = [c for c in TABLE.columns if c.key not in ("id", "loan_id")]
    with db.read_session() as session:
        rows = session.execute(
            select(*columns).where(TABLE.c.loan_id == loan_id).order_by(TABLE.c.id)
        ).all()
    return [(row[0].split()[1], *row[1:]) for row in rows]  # catalogue number without prefix


def _one_column(prefix: str) -> list[dict[str, Any]]:
    return [{"catalog_number": f"{prefix} {n}"} for n in (1, 2)]


@pytest.mark.parametrize(
    ("rows", "shared"),
    [(_rows, {}), (_one_column, {"extra": {"fieldNumber": "F-9"}})],
    ids=["typed-columns", "one-column"],
)
def test_same_rows_as_sqlalchemy_insert(
    db: Database, rows: Callable[[str], list[dict[str, Any]]], shared: dict[str, Any]
) -> None:
    ours, theirs = _new_loan(db), _new_loan(db)
    shared = {"status": SpecimenStatus.EXPECTED, "created_at": WHEN, **shared}
    with db.write_session() as session:
        insert_rows(session.connection(), TABLE, rows("A"), {"loan_id": ours, **shared})
        session.execute(insert(TABLE), [{**r, "loan_id": theirs, **shared} for r in rows("B")])
        session.commit()
    written = _stored(db, ours)
    assert written == _stored(db, theirs)
    assert len(written) == 2 and written[0][-1] is not None  # created_at came back


def test_refuses_rows_without_a_defaulted_column(db: Database) -> None:
    loan_id = _new_loan(db)
    rows = [{k: v for k, v in r.items() if k != "extra"} for r in _rows("C")]
    with db.write_session() as session, pytest.raises(ValueError, match="extra"):
        insert_rows(session.connection(), TABLE, rows, {"loan_id": loan_id, "created_at": WHEN})
    with db.read_session() as session:
        assert session.scalars(select(Specimen.id).where(Specimen.loan_id == loan_id)).all() == []
