"""A scan costs the same few statements however deep the item sits and however many
siblings its parents have: no query per ancestor, no collections loaded (both backends)."""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager

from sqlalchemy import event

from tests import factories as make
from tracker.db.database import Database
from tracker.services.labels import read_scan


@contextmanager
def counted(db: Database) -> Iterator[list[str]]:
    statements: list[str] = []

    def seen(_conn: object, _cursor: object, statement: str, *_args: object) -> None:
        statements.append(statement)

    event.listen(db.engine, "before_cursor_execute", seen)
    try:
        yield statements
    finally:
        event.remove(db.engine, "before_cursor_execute", seen)


def test_a_scan_reads_a_fixed_handful_of_statements(db: Database) -> None:
    spec = make.specimen(db, make.loan(db))
    powder = make.powder(db, spec)
    solution = make.solution(db, powder)
    make.concentration(db, solution)
    aliquots = [make.aliquot(db, solution, grams="0.0500") for _ in range(6)]
    make.solution(db, make.powder(db, spec))  # a sibling branch, never read by the scan
    with counted(db) as shallow:
        assert read_scan(db, spec).ancestors[-1].startswith("LN-")
    with counted(db) as deep:
        answer = read_scan(db, aliquots[3].lower())
    assert [a.split()[0] for a in answer.ancestors][-3:] == [spec, powder, solution]
    selects = [s for s in deep if s.lstrip().upper().startswith("SELECT")]
    assert len(selects) <= 3, selects  # the chain, the operators' initials, nothing per hop
    assert len(deep) <= len(shallow) + 1
