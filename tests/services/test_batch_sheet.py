"""Entering a column batch from a sheet: all or nothing, repeatable, refusals name the cell."""

from __future__ import annotations

import pytest

from tests import factories as make
from tests.conftest import Counts
from tracker.db.database import Database
from tracker.domain.errors import InputError, RuleViolation
from tracker.services.bench import batch_sheet, chemistry, columns
from tracker.services.labels import handling
from tracker.services.ledger import chain
from tracker.services.read import lineage

HEADER = "slot,kind,item,loaded,matrix,Ca,Ca u"


def sheet(*rows: str) -> bytes:
    return ("\n".join([HEADER, *rows]) + "\n").encode()


def enter(
    db: Database, batch: str, content: bytes, name: str = "cols.csv"
) -> batch_sheet.SheetView:
    request = {"batch": batch, "filename": name, "content": content}
    return batch_sheet.enter_sheet(db, "tech", request).item


@pytest.fixture
def bench(db: Database) -> tuple[str, str]:
    """A batch, a reference material and a tooth aliquot of 0.0200 g at 500 µg/g Ca."""
    solution = make.solution(db, make.powder(db, make.specimen(db, make.loan(db))))
    make.concentration(db, solution, "500 ug/g")
    aliquot = make.aliquot(db, solution, grams="0.0200")
    chemistry.add_reference_material(db, "boss", {"name": "RM-A", "element": "Ca"})
    return make.batch(db), aliquot


def full(aliquot: str) -> bytes:
    return sheet(
        "1,blank,,,,0.050 ug,0.002 ug",
        f"2,sample,{aliquot},,,9.000 ug,0.09 ug",
        "3,reference,RM-A,10 ug,,9.9 ug,",
    )


def test_a_sheet_enters_every_column_and_cut_in_one_event(
    db: Database, bench: tuple[str, str]
) -> None:
    batch, aliquot = bench
    head = chain.verify(db).head_seq
    answer = enter(db, batch, full(aliquot))
    assert (len(answer.positions_added), len(answer.cuts_added)) == (3, 3)
    assert chain.verify(db).head_seq == head + 1
    summary = columns.summarize_batch(db, batch)
    sample = next(p for p in summary.positions if p.kind == "sample")
    # by hand: 0.0200 g × 500 µg/g = 10 µg loaded; 9.000 / 10 = 90 %
    assert sample.loaded_ug == pytest.approx(10.0) and sample.yield_fraction == pytest.approx(0.9)
    assert summary.blank_ng == pytest.approx(50.0)
    queued = {label.item for label in handling.list_labels(db)}
    assert set(answer.positions_added + answer.cuts_added) <= queued
    history = lineage.show_item(db, answer.cuts_added[0]).history
    assert [e.action for e in history] == ["batch.sheet_entered"]  # found through event_ref


def test_the_same_sheet_again_is_refused_and_a_partial_one_is_completed(
    db: Database, counts: Counts, bench: tuple[str, str]
) -> None:
    batch, aliquot = bench
    first_two = sheet("1,blank,,,,0.050 ug,", f"2,sample,{aliquot},,,,")
    enter(db, batch, first_two)
    answer = enter(db, batch, full(aliquot))
    assert answer.already_entered == 3  # two columns and the blank's cut
    assert (len(answer.positions_added), len(answer.cuts_added)) == (1, 2)
    before = counts()
    with pytest.raises(RuleViolation, match="every row is already entered"):
        enter(db, batch, full(aliquot))
    assert counts() == before


@pytest.mark.parametrize(
    ("rows", "where", "fragment"),
    [
        (["1,blank,,,,,", "3,blank,,,,,"], "cols.csv, row 3, column slot", "column 2 is the next"),
        (["1,column,,,,,"], "cols.csv, row 2, column kind", "is not sample, blank or reference"),
        (["1,sample,,,,,"], "cols.csv, row 2, column item", "needs aliquot"),
        (["1,reference,RM-Q,1 ug,,,"], "cols.csv, row 2, column item", "RM-Q"),
        (["1,reference,RM-A,10,,,"], "cols.csv, row 2, column loaded", "unit"),
        (["1,blank,,,,about 9,"], "cols.csv, row 2, column Ca", "unit"),
        (["1,blank,,,,,", "x,blank,,,,,"], "cols.csv, row 3, column slot", "column number"),
        # found by hypothesis: one column listed twice used to fail on the unsaved cut
        (
            ["1,blank,,,,0.01 ug,", "1,blank,,,,0.02 ug,"],
            "cols.csv, row 3, column slot",
            "listed on row 2 too",
        ),
    ],
)
def test_a_bad_row_enters_nothing_and_names_file_row_and_column(
    db: Database,
    counts: Counts,
    bench: tuple[str, str],
    rows: list[str],
    where: str,
    fragment: str,
) -> None:
    batch, _ = bench
    before = counts()
    with pytest.raises((InputError, RuleViolation)) as caught:
        enter(db, batch, sheet(*rows))
    assert caught.value.field == where and fragment in caught.value.one_line()
    assert counts() == before


def test_a_sheet_that_disagrees_with_the_batch_is_refused(
    db: Database, counts: Counts, bench: tuple[str, str]
) -> None:
    batch, aliquot = bench
    enter(db, batch, full(aliquot))
    before = counts()
    with pytest.raises(RuleViolation, match="already holds blank"):
        enter(db, batch, sheet("1,reference,RM-A,10 ug,,,"))
    with pytest.raises(RuleViolation, match=r"a correction of CU-\S+ recovery changes it"):
        enter(db, batch, sheet("1,blank,,,,0.060 ug,0.002 ug"))
    with pytest.raises(InputError, match="not a batch sheet column") as caught:
        enter(db, batch, b"slot,kind,Sr\n1,blank,1 ug\n")
    assert caught.value.field == "cols.csv, row 1, column sr"
    assert counts() == before


def test_a_quoted_empty_cut_cell_enters_the_column_alone(
    db: Database, bench: tuple[str, str]
) -> None:
    """Found by hypothesis: '""' is an empty CSV cell, so no cut (the fuzz test expected one)."""
    batch, _ = bench
    answer = enter(db, batch, b'slot,kind,Ca\n1,blank,""\n')
    assert (len(answer.positions_added), answer.cuts_added, answer.already_entered) == (1, [], 0)
