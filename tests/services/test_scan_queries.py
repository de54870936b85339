"""A scan costs the same few statements however deep the item sits and however many
siblings its parents have: no query per ancestor, no collections loaded (both backends)."""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager

import pytest
from sqlalchemy import event

from tests import factories as make
from tracker.db.database import Database
from tracker.domain.ids import PublicId, parse_id
from tracker.services.core import lookup
from tracker.services.labels import handling
from tracker.services.labels.handling import read_scan
from tracker.services.read import lineage


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


def test_a_scan_reads_the_id_once(db: Database, monkeypatch: pytest.MonkeyPatch) -> None:
    """The scanned text is read into an ID once and the row found by that value: the
    loading of its parents does not read the text again."""
    spec = make.specimen(db, make.loan(db))
    aliquot = make.aliquot(db, make.solution(db, make.powder(db, spec)), grams="0.0500")
    read: list[str] = []

    def reading(text: str, prefix: str | None = None) -> PublicId:
        read.append(text)
        return parse_id(text, prefix)

    monkeypatch.setattr(lookup, "parse_id", reading)
    for module in (lineage, handling):  # wherever a second reading used to hide
        if hasattr(module, "parse_id"):
            monkeypatch.setattr(module, "parse_id", reading)
    answer = read_scan(db, aliquot.lower())
    assert answer.id == aliquot and read == [aliquot.lower()]
