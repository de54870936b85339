"""Each flow end to end through the interface, and what it left in the DATABASE afterwards:
the rows the services wrote and the ledger events that record them."""

from __future__ import annotations

import sqlite3
from decimal import Decimal
from pathlib import Path

from sqlalchemy import select
from textual.widget import Widget
from textual.widgets import DataTable, Input, ProgressBar, Static

from tests.ui.conftest import (
    Lab,
    events_after,
    head,
    query,
    scan,
    screen_as,
    settle,
    text_of,
    type_slowly,
    until,
)
from tracker.domain.ids import Kind, format_id
from tracker.domain.models import (
    BatchPosition,
    ColumnBatch,
    Cut,
    InstrumentSession,
    Label,
    LabelJob,
    LabelStatus,
    Measurement,
    MeasurementRole,
    Powder,
    Result,
    Specimen,
    SpecimenStatus,
)
from tracker.services.ledger import audit, chain
from tracker.ui.screens.batch import BatchScreen
from tracker.ui.screens.checkin import CheckInScreen
from tracker.ui.screens.confirm import ConfirmScreen
from tracker.ui.screens.drill import DrillScreen
from tracker.ui.screens.item import ItemScreen
from tracker.ui.screens.labels import LabelsScreen
from tracker.ui.screens.ledger import LedgerScreen
from tracker.ui.screens.session import SessionScreen

LOAN_BOX = format_id(Kind.LOCATION, 6)  # "Loan box A" in the demo scenario


def set_field(screen: Widget, name: str, value: str) -> None:
    screen.query_one(f"#f-{name}", Input).value = value


async def test_check_in_by_scan(lab: Lab) -> None:
    start = head(lab)
    async with lab.app("tomas").run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("c")
        await settle(pilot)
        form = screen_as(pilot, CheckInScreen)
        await scan(pilot, "sp00011s")  # lower case, no hyphens: as some scanners send it
        assert form.query_one("#f-specimen", Input).value == "sp00011s"
        assert "✓ SP-00011-S" in text_of(form.query_one("#field-specimen .field-hint", Static))
        assert pilot.app.focused is form.query_one("#f-condition", Input)  # moved on
        set_field(form, "condition", "complete; root tip chipped (pre-existing)")
        form.query_one("#f-location", Input).focus()
        await scan(pilot, LOAN_BOX)
        await pilot.press("ctrl+s")
        await settle(pilot)
        assert isinstance(pilot.app.screen, ItemScreen)
        assert pilot.app.screen.item_id == "SP-00011-S"
    (specimen,) = query(lab, select(Specimen).where(Specimen.id == 11))
    assert specimen.status is SpecimenStatus.ON_HAND
    assert specimen.location_id == 6
    assert specimen.condition_in.startswith("complete; root tip")
    (event,) = events_after(lab, start)
    assert (event.action, event.object_ref, event.operator) == (
        "specimen.checked_in",
        "SP-00011-S",
        "tomas",
    )
    labels = query(lab, select(Label).where(Label.item_ref == "SP-00011-S"))
    assert [label.status for label in labels] == [LabelStatus.QUEUED]


async def test_a_scan_anywhere_jumps_and_a_misread_one_is_refused_visibly(lab: Lab) -> None:
    start = head(lab)
    app = lab.app()
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await scan(pilot, "PW-00007-U")
        assert isinstance(pilot.app.screen, ItemScreen)
        assert pilot.app.screen.item_id == "PW-00007-U"
        await scan(pilot, "PW-00007-V")  # one character misread
        assert pilot.app.screen.item_id == "PW-00007-U"  # stayed put
        assert app.status_line.startswith("✗ scan 'PW-00007-V': check character")
        await type_slowly(pilot, "cd")  # typed by a person: text to find, never shortcuts
        assert pilot.app.screen.item_id == "PW-00007-U"
        assert "names nothing" in app.status_line
        await pilot.press("d")  # one key alone is a shortcut
        await settle(pilot)
        assert isinstance(pilot.app.screen, DrillScreen)
    assert events_after(lab, start) == []


async def test_typing_outside_a_field_opens_no_forms_and_enter_finds_the_text(lab: Lab) -> None:
    app = lab.app()
    async with app.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        overview, stacked = pilot.app.screen, len(pilot.app.screen_stack)
        # a path typed with the focus on the loans table: c, d, s, k, a and m are shortcuts
        await type_slowly(pilot, "/home/dmacks/data/scans", gap=0.18)
        assert pilot.app.screen is overview and len(pilot.app.screen_stack) == stacked
        await type_slowly(pilot, "kfmnh p 20311", gap=0.2)  # a catalogue number, then Enter
        await until(pilot, lambda: isinstance(pilot.app.screen, ItemScreen))
        assert isinstance(pilot.app.screen, ItemScreen)
        detail = pilot.app.screen
        assert detail.item_id.startswith("SP-")
        db = lab.open()
        try:
            with db.read_session() as session:
                found = session.scalars(
                    select(Specimen).where(Specimen.catalog_number == "KFMNH P 20311")
                ).one()
                assert detail.item_id == found.public_id
        finally:
            db.close()


def previewed(form: DrillScreen, mass_mg: float) -> bool:
    """The debounced preview has answered for this mass."""
    view = form.preview_view
    return view is not None and view.mass_mg is not None and abs(view.mass_mg - mass_mg) < 1e-9


async def test_drill_refused_over_the_allowance_then_accepted_within(lab: Lab) -> None:
    start = head(lab)
    async with lab.app("tomas").run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("d")
        await settle(pilot)
        form = screen_as(pilot, DrillScreen)
        assert form.query_one("#f-override-reason", Input).disabled  # tomas is no manager
        await scan(pilot, "SP-00010-U")
        set_field(form, "tare", "1200.000 mg")
        set_field(form, "gross", "1201.500 mg")  # 1.5 mg: over 0.814 mg left on the specimen
        await until(pilot, lambda: previewed(form, 1.5))
        preview = text_of(form.query_one("#preview", Static))
        assert "✗ over: per-specimen limit 3 mg" in preview
        assert "Ctrl+S will be refused" in preview
        await pilot.press("ctrl+s")
        await settle(pilot)
        outcome = text_of(form.query_one("#outcome", Static))
        assert outcome.startswith("✗ refused: drilled-mass:")
        assert "a manager may override" in outcome
        assert pilot.app.screen is form
        assert events_after(lab, start) == []  # the refusal wrote nothing
        set_field(form, "gross", "1200.500 mg")
        await until(pilot, lambda: previewed(form, 0.5))
        assert "✓ within the loan's terms" in text_of(form.query_one("#preview", Static))
        assert form.preview_view is not None and form.preview_view.within
        await pilot.press("ctrl+s")
        await settle(pilot)
        assert isinstance(pilot.app.screen, ItemScreen)
    powders = query(lab, select(Powder).where(Powder.specimen_id == 10).order_by(Powder.id))
    assert len(powders) == 2
    assert powders[-1].mass_mg == Decimal("0.5")  # exactly the readings' difference
    assert powders[-1].drilled_by == "tomas" and powders[-1].override_reason is None
    (event,) = events_after(lab, start)
    assert (event.action, event.parent_ref, event.operator) == (
        "powder.drilled",
        "SP-00010-U",
        "tomas",
    )
    assert query(lab, select(Label).where(Label.item_ref == powders[-1].public_id))


async def test_a_batch_built_by_scanning(lab: Lab) -> None:
    start = head(lab)
    async with lab.app().run_test(size=(100, 30)) as pilot:
        await settle(pilot)
        await pilot.press("f3")
        await settle(pilot)
        await pilot.press("ctrl+n")
        await settle(pilot)
        form = pilot.app.screen
        set_field(form, "name", "Ca 2026-12 test")
        set_field(form, "performed-on", "2026-12-01")
        set_field(form, "resin", "DGA resin, 0.25 mL")
        set_field(form, "elution-scheme", "load 3 M HNO3; elute Ca in 0.05 M HNO3")
        await pilot.press("ctrl+s")
        await settle(pilot)
        screen = screen_as(pilot, BatchScreen)
        assert screen.batch_id is not None
        assert pilot.app.focused is screen.query_one("#f-aliquot", Input)
        await scan(pilot, "AQ-00002-D")
        assert pilot.app.focused is screen.query_one("#f-aliquot", Input)  # ready for the next
        await pilot.press("ctrl+b")  # a procedural blank
        await settle(pilot)
        await pilot.press("ctrl+r")
        await settle(pilot)
        reference = pilot.app.screen
        set_field(reference, "reference-material", "SRM 915b")
        set_field(reference, "loaded-ug", "10.0")
        set_field(reference, "loaded-u-ug", "0.05")
        await pilot.press("ctrl+s")
        await settle(pilot)
        assert pilot.app.screen is screen
        assert screen.summary is not None and len(screen.summary.positions) == 3
        loaded = screen.summary.positions[0].loaded_ug
        assert loaded is not None
        await pilot.press("ctrl+e")  # recovery of the column under the cursor: the aliquot
        await settle(pilot)
        cut_form = pilot.app.screen
        set_field(cut_form, "recovered", f"{loaded * 0.8:.3f} ug")  # 80 % yield: flagged
        await pilot.press("ctrl+s")
        await settle(pilot)
        assert pilot.app.screen is screen
        first = screen.summary.positions[0]
        assert "low yield" in first.flags
        assert "low yield" in str(screen.query_one("#positions", DataTable).get_row_at(0)[-1])
    (batch,) = query(lab, select(ColumnBatch).where(ColumnBatch.name == "Ca 2026-12 test"))
    positions = query(
        lab,
        select(BatchPosition)
        .where(BatchPosition.batch_id == batch.id)
        .order_by(BatchPosition.slot),
    )
    assert [p.kind.value for p in positions] == ["sample", "blank", "reference"]
    assert positions[0].aliquot_id == 2
    (cut,) = query(lab, select(Cut).where(Cut.position_id == positions[0].id))
    assert cut.name == "Ca" and abs(float(cut.recovered_ug) - round(loaded * 0.8, 3)) < 1e-9
    actions = [e.action for e in events_after(lab, start)]
    assert actions == ["batch.created", *["batch.position_added"] * 3, "cut.recorded"]


CSV = """\
# INVENTED test export, written by the test
Run,Sample,44Ca/40Ca,2SE 44/40,44Ca/42Ca,2SE 44/42
1,SRM 915a,0.02208549,0.00000088,3.215917,0.000096
2,CU-00002-J,0.02207650,0.00000088,3.215390,0.000096
3,SRM 915a,0.02208560,0.00000088,3.215990,0.000096
4,SRM 915b,0.02210300,0.00000088,3.217170,0.000097
5,SRM 915a,0.02208530,0.00000088,3.216010,0.000096
6,CU-00002-J,0.02207660,0.00000088,3.215400,0.000096
7,SRM 915a,0.02208570,0.00000088,3.216000,0.000096
8,rinse acid check,0.00000100,0.00000088,0.000100,0.000096
9,SRM 915a,0.02208540,0.00000088,3.215980,0.000096
"""


async def test_a_session_imported_and_reduced(lab: Lab, tmp_path: Path) -> None:
    export = tmp_path / "ca-test-run.csv"
    export.write_text(CSV, encoding="utf-8")
    start = head(lab)
    async with lab.app().run_test(size=(100, 30)) as pilot:
        await settle(pilot)
        await pilot.press("f4")
        await settle(pilot)
        await pilot.press("i")
        await settle(pilot)
        form = pilot.app.screen
        assert "mc-ca" in text_of(form.query_one(".intro", Static))  # saved profiles listed
        set_field(form, "file", str(export))
        set_field(form, "profile", "mc-ca")
        set_field(form, "name", "Ca test run")
        set_field(form, "instrument", "MC-ICP-MS (test)")
        set_field(form, "bracketing-standard", "SRM 915a")
        await pilot.press("ctrl+s")
        await settle(pilot)
        screen = screen_as(pilot, SessionScreen)
        assert "not reduced yet" in text_of(screen.query_one("#session-head", Static))
        unmatched = screen.query_one("#unmatched", DataTable)
        assert unmatched.row_count == 1
        assert "rinse acid check" in str(unmatched.get_row_at(0))
        await pilot.press("r")
        await settle(pilot)
        assert "✓ reduced" in text_of(screen.query_one("#outcome", Static))
        table = screen.query_one("#results", DataTable)
        assert table.row_count == 4  # the sample and SRM 915b, each for two ratios
        rows = [str(table.get_row_at(i)) for i in range(table.row_count)]
        assert any("SRM 915b" in r and ("✓ pass" in r or "✗ FAIL" in r) for r in rows)
    (session,) = query(
        lab, select(InstrumentSession).where(InstrumentSession.name == "Ca test run")
    )
    runs = query(lab, select(Measurement).where(Measurement.session_id == session.id))
    assert len(runs) == 9
    assert [m.sample_name for m in runs if m.role is MeasurementRole.UNMATCHED] == [
        "rinse acid check"
    ]
    results = query(lab, select(Result).where(Result.session_id == session.id))
    assert sorted(r.ratio for r in results) == ["44/40", "44/40", "44/42", "44/42"]
    assert all(r.n == 2 for r in results if r.cut_id is not None)
    assert [(e.action, e.object_ref) for e in events_after(lab, start)] == [
        ("session.imported", session.public_id),
        ("session.reduced", session.public_id),
    ]


async def test_labels_previewed_and_printed(lab: Lab) -> None:
    queued = query(lab, select(Label).where(Label.status == LabelStatus.QUEUED).order_by(Label.id))
    start = head(lab)
    async with lab.app().run_test(size=(100, 30)) as pilot:
        await settle(pilot)
        await pilot.press("f5")
        await settle(pilot)
        screen = screen_as(pilot, LabelsScreen)
        queue = screen.query_one("#queue", DataTable)
        assert queue.row_count == len(queued)
        queue.focus()
        await pilot.press("v")
        await settle(pilot)
        sheet = text_of(screen.query_one("#sheet", Static))
        assert sheet.startswith("a4-65: 5 × 13 labels")
        assert queued[0].item_ref in sheet
        await pilot.press("p")
        await settle(pilot)
        assert isinstance(pilot.app.screen, ConfirmScreen)  # the whole queue: asked first
        question = text_of(pilot.app.screen.query_one("#confirm-question", Static))
        assert f"Print all {len(queued)} queued labels" in question
        await pilot.press("y")
        await settle(pilot)
        outcome = text_of(screen.query_one("#outcome", Static))
        assert outcome.startswith(f"✓ printed {len(queued)} label(s)")
        assert queue.row_count == 0
    (job,) = query(lab, select(LabelJob))
    (event,) = events_after(lab, start)
    assert (event.action, event.object_ref) == ("labels.printed", job.public_id)
    pdf = lab.out / f"labels-{job.public_id}-event-{event.seq}.pdf"  # named after job and event
    assert pdf.read_bytes().startswith(b"%PDF")
    assert job.labels == len(queued) and job.operator == "ines"
    assert not query(lab, select(Label).where(Label.status == LabelStatus.QUEUED))


async def test_ledger_verified_with_its_head_hash(lab: Lab) -> None:
    db = lab.open()
    expected = chain.verify(db)
    db.close()
    async with lab.app().run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("f6")
        await settle(pilot)
        screen = screen_as(pilot, LedgerScreen)
        assert screen.query_one("#events", DataTable).row_count == expected.events
        await pilot.press("v")
        await settle(pilot)
        result = text_of(screen.query_one("#verify-result", Static))
        assert result == (
            f"✓ ledger intact: {expected.events} events · {expected.events} signed, every "
            f"signature valid · head #{expected.head_seq} {expected.head_hash}"
        )
        assert screen.query_one("#verify-progress", ProgressBar).percentage == 1.0


async def test_ledger_rows_name_their_items_and_fit_the_bench_screen(lab: Lab) -> None:
    """Each event's action is said in words with the name of its item (a specimen by its
    catalogue number), and the table is no wider than 80 columns."""
    specimens = {s.public_id: s.catalog_number for s in query(lab, select(Specimen))}
    async with lab.app().run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("f6")
        await settle(pilot)
        table = screen_as(pilot, LedgerScreen).query_one("#events", DataTable)
        assert table.virtual_size.width <= table.scrollable_content_region.width
        about_specimens = 0
        for n in range(table.row_count):
            *_, item, action = (str(cell) for cell in table.get_row_at(n))
            if item in specimens:
                about_specimens += 1
                words = " ".join(line.strip() for line in action.split("\n"))
                assert words.endswith(f" · {specimens[item]}"), (item, words)
        assert about_specimens >= len(specimens)  # each was at least added to its loan


async def test_ledger_screen_audits_the_books_in_a_worker(lab: Lab) -> None:
    """`a` replays the ledger and holds every row against it, with the progress bar; a value
    changed behind the ledger's back is named."""
    db = lab.open()
    expected = audit.audit(db)
    db.close()
    assert expected.ok
    with sqlite3.connect(lab.db_path) as raw:
        raw.execute("UPDATE powder SET mass_mg = 1.0 WHERE id = 1")
    async with lab.app().run_test(size=(100, 30)) as pilot:
        await settle(pilot)
        await pilot.press("f6")
        await settle(pilot)
        screen = pilot.app.screen
        assert isinstance(screen, LedgerScreen)
        await pilot.press("a")
        await settle(pilot)
        result = text_of(screen.query_one("#verify-result", Static))
        assert result.startswith("✗ books DIFFER from the ledger in 1 place(s): powder PW-00001-5")
        assert "mass_mg is 1.0" in result
        assert screen.query_one("#verify-progress", ProgressBar).percentage == 1.0


async def test_operator_chosen_at_start_and_remembered(lab: Lab) -> None:
    first = lab.app(None)
    async with first.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        assert type(pilot.app.screen).__name__ == "OperatorScreen"
        await pilot.press("down", "down", "enter")  # ines, priya, tomas (by code): tomas
        await settle(pilot)
        assert first.operator == "tomas"
        assert "operator: tomas" in first.operator_label
    again = lab.app(None)
    async with again.run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("enter")  # the remembered one is highlighted
        await settle(pilot)
        assert again.operator == "tomas"
