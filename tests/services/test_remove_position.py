"""Taking a column scanned by mistake off its batch: one event or nothing, the row kept and
marked, its slot free again, its aliquot available again, its history told."""

from __future__ import annotations

import pytest

from tests import factories as make
from tests.conftest import Counts
from tracker.db.database import Database
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.models import BatchPosition
from tracker.services.bench import batch_sheet, chemistry, columns
from tracker.services.core.lookup import get_by_id
from tracker.services.labels import handling
from tracker.services.ledger import chain
from tracker.services.ledger.audit import audit
from tracker.services.read import lineage

LEDGER = {"ledger_head", "custody_event", "event_ref"}  # the event and what it mentions
REASON = "scanned the neighbouring tube by mistake"


@pytest.fixture
def loaded(db: Database) -> tuple[str, list[str]]:
    """A batch with a blank in column 1 and two sample aliquots in columns 2 and 3, plus a
    third aliquot not yet loaded (the one that should have been scanned)."""
    solution = make.solution(db, make.powder(db, make.specimen(db, make.loan(db))))
    make.concentration(db, solution, "500 ug/g")
    aliquots = [make.aliquot(db, solution, grams="0.0200") for _ in range(3)]
    batch = make.batch(db)
    chemistry.add_position(db, "tech", {"batch": batch, "kind": "blank"})
    for aliquot in aliquots[:2]:
        chemistry.add_position(db, "tech", {"batch": batch, "kind": "sample", "aliquot": aliquot})
    return batch, aliquots


def _position_at(db: Database, batch: str, slot: int) -> str:
    summary = columns.summarize_batch(db, batch)
    return next(p.id for p in summary.positions if p.slot == slot)


def test_removing_a_column_marks_it_frees_its_slot_and_writes_one_event(
    db: Database, counts: Counts, loaded: tuple[str, list[str]]
) -> None:
    batch, aliquots = loaded
    wrong = _position_at(db, batch, 2)
    before = counts()
    assert wrong in {label.item for label in handling.list_labels(db)}

    done = chemistry.remove_position(db, "tech", {"position": wrong, "reason": REASON})

    after = counts()
    assert after["ledger_head"] == before["ledger_head"] + 1  # exactly one event
    books = [table for table in before if table not in LEDGER]
    assert [after[t] for t in books] == [before[t] for t in books]  # marked, not erased
    assert done.item.slot == 2 and done.item.reason == REASON and done.item.labels_cancelled == 1
    with db.read_session() as session:
        row = get_by_id(session, BatchPosition, "position", wrong)
        assert row.removed_at is not None and row.removal_reason == REASON
        assert row.aliquot is not None and row.aliquot.status.value == "available"
    assert wrong not in {label.item for label in handling.list_labels(db)}
    summary = columns.summarize_batch(db, batch)
    assert [p.slot for p in summary.positions] == [1, 3]
    assert [(r.id, r.reason) for r in summary.removed] == [(wrong, REASON)]

    # the freed slot takes the next column, and the aliquot removed may be loaded again
    again = chemistry.add_position(
        db, "tech", {"batch": batch, "kind": "sample", "aliquot": aliquots[2]}
    )
    assert again.item.slot == 2
    back = chemistry.add_position(
        db, "tech", {"batch": batch, "kind": "sample", "aliquot": aliquots[0]}
    )
    assert back.item.slot == 4

    # the books still agree with the ledger that replays them
    report = audit(db)
    assert report.chain.ok and not report.discrepancies


def test_the_aliquots_history_tells_it_was_loaded_then_removed_and_why(
    db: Database, loaded: tuple[str, list[str]]
) -> None:
    batch, aliquots = loaded
    wrong = _position_at(db, batch, 2)
    chemistry.remove_position(db, "tech", {"position": wrong, "reason": REASON})
    detail = lineage.show_item(db, aliquots[0])
    actions = [e.action for e in detail.history]
    assert actions.index("batch.position_added") < actions.index("batch.position_removed")
    column = next(child for child in detail.item.children if child.id == wrong)
    assert column.facts is not None and column.facts.kind == "batchposition"
    assert column.facts.removal_reason == REASON and column.facts.removed_at is not None


def test_a_column_with_a_cut_collected_is_refused_and_nothing_changes(
    db: Database, counts: Counts, loaded: tuple[str, list[str]]
) -> None:
    batch, _ = loaded
    ran = _position_at(db, batch, 3)
    columns.record_cut(db, "tech", {"position": ran, "cut": "Ca", "recovered": "9.9 ug"})
    before = counts()
    with pytest.raises(RuleViolation, match=r"has cuts collected \(Ca\).*dispose of its cuts"):
        chemistry.remove_position(db, "tech", {"position": ran, "reason": REASON})
    assert counts() == before
    assert [p.id for p in columns.summarize_batch(db, batch).positions if p.slot == 3] == [ran]


def test_removing_twice_or_without_a_reason_is_refused_and_nothing_changes(
    db: Database, counts: Counts, loaded: tuple[str, list[str]]
) -> None:
    batch, _ = loaded
    wrong = _position_at(db, batch, 2)
    before = counts()
    with pytest.raises(InputError, match="reason"):
        chemistry.remove_position(db, "tech", {"position": wrong, "reason": ""})
    assert counts() == before
    chemistry.remove_position(db, "tech", {"position": wrong, "reason": REASON})
    before = counts()
    with pytest.raises(RuleViolation, match="already removed"):
        chemistry.remove_position(db, "tech", {"position": wrong, "reason": REASON})
    with pytest.raises(RuleViolation, match="was removed"):
        columns.record_cut(db, "tech", {"position": wrong, "cut": "Ca", "recovered": "9 ug"})
    assert counts() == before


def test_a_sheet_may_fill_a_freed_slot(db: Database, loaded: tuple[str, list[str]]) -> None:
    batch, aliquots = loaded
    chemistry.remove_position(
        db, "tech", {"position": _position_at(db, batch, 2), "reason": REASON}
    )
    content = f"slot,kind,item\n2,sample,{aliquots[2]}\n".encode()
    answer = batch_sheet.enter_sheet(
        db, "tech", {"batch": batch, "filename": "cols.csv", "content": content}
    ).item
    assert len(answer.positions_added) == 1
    summary = columns.summarize_batch(db, batch)
    assert [(p.slot, p.holds) for p in summary.positions if p.kind == "sample"] == [
        (2, aliquots[2]),
        (3, aliquots[1]),
    ]
    assert chain.verify(db).ok
