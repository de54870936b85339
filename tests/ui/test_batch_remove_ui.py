"""Removing a column scanned by mistake from the batch screen: the highlighted column, Ctrl+D,
the reason typed, the question answered; judged by what the database holds afterwards."""

from __future__ import annotations

from sqlalchemy import select
from textual.pilot import Pilot
from textual.widgets import DataTable, Static

from tests.conftest import snapshot_counts
from tests.ui.conftest import Lab, events_after, head, query, screen_as, settle, text_of, type_into
from tracker.domain.models import Aliquot, BatchPosition, Label, LabelStatus
from tracker.services.bench import chemistry
from tracker.ui.app import PALETTE, TrackerApp, bench_form
from tracker.ui.screens.batch import BatchScreen
from tracker.ui.screens.batch_forms import RemovePositionScreen
from tracker.ui.screens.confirm import ConfirmScreen

BATCH = "CB-00001-G"  # the demo's calcium batch: ten columns, each with its cut collected
SPARE = "AQ-00002-D"  # the demo's one aliquot not yet on a column
REASON = "scanned the neighbouring tube by mistake"


def _load_spare(lab: Lab) -> str:
    """Put the spare aliquot on the batch's next column, as a wrong scan would."""
    db = lab.open()
    try:
        request = {"batch": BATCH, "kind": "sample", "aliquot": SPARE}
        return chemistry.add_position(db, "ines", request).item.id
    finally:
        db.close()


async def _remove_highlighted(pilot: Pilot[None], position: str, reason: str) -> BatchScreen:
    """On the batch screen: highlight ``position``, Ctrl+D, type the reason, save, say yes."""
    app = pilot.app
    assert isinstance(app, TrackerApp)
    app.open_id(BATCH)
    await settle(pilot)
    screen = screen_as(pilot, BatchScreen)
    table = screen.query_one("#positions", DataTable)
    table.move_cursor(row=table.get_row_index(position))
    await pilot.press("ctrl+d")
    await settle(pilot)
    form = screen_as(pilot, RemovePositionScreen)
    assert form.id_input("position").value == position  # the highlighted column, filled in
    await type_into(pilot, "reason", reason)
    await pilot.press("ctrl+s")
    await settle(pilot)
    screen_as(pilot, ConfirmScreen)
    await pilot.press("y")
    await settle(pilot)
    return screen


async def test_a_column_removed_with_its_reason(lab: Lab) -> None:
    position = _load_spare(lab)
    start = head(lab)
    async with lab.app("tomas").run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        screen = await _remove_highlighted(pilot, position, REASON)
        assert pilot.app.screen is screen  # back on the batch, which no longer lists it
        assert screen.summary is not None
        assert position not in {p.id for p in screen.summary.positions}
        assert REASON in text_of(screen.query_one("#batch-head", Static))
    (row,) = query(lab, select(BatchPosition).where(BatchPosition.id == int(position[3:8])))
    assert row.removal_reason == REASON and row.removed_at is not None
    (aliquot,) = query(lab, select(Aliquot).where(Aliquot.id == int(SPARE[3:8])))
    assert aliquot.status.value == "available"
    labels = query(lab, select(Label).where(Label.item_ref == position))
    assert labels and all(label.status is LabelStatus.CANCELLED for label in labels)
    assert [e.action for e in events_after(lab, start)] == ["batch.position_removed"]
    assert events_after(lab, start)[0].operator == "tomas"


async def test_a_column_that_ran_is_refused_in_words_and_nothing_is_written(lab: Lab) -> None:
    with_cut = query(
        lab, select(BatchPosition).where(BatchPosition.batch_id == 1, BatchPosition.slot == 2)
    )[0].public_id
    db = lab.open()
    before = snapshot_counts(db)
    db.close()
    async with lab.app("tomas").run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await _remove_highlighted(pilot, with_cut, REASON)
        form = screen_as(pilot, RemovePositionScreen)  # the form stays, saying why
        outcome = text_of(form.query_one("#outcome", Static))
        assert outcome.startswith("✗ refused: ") and "cuts collected" in outcome, outcome
    db = lab.open()
    assert snapshot_counts(db) == before
    db.close()


def test_the_palette_opens_the_removal_form() -> None:
    assert "bench('batch_remove')" in {action for _, _, action in PALETTE}
    assert isinstance(bench_form("batch_remove"), RemovePositionScreen)
