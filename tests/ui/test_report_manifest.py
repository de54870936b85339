"""The return report and manifest screens end to end: what they show, what they write, and
what the database and the output folder hold afterwards. Loans, catalogue numbers and
localities are the invented demo's; the manifest rows below are invented too."""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import pytest
from sqlalchemy import select
from textual.pilot import Pilot
from textual.widgets import DataTable, Input, Static

from tests.busy import held
from tests.ui.conftest import (
    Lab,
    events_after,
    head,
    query,
    screen_as,
    settle,
    text_of,
    until,
)
from tracker.domain.models import Loan, Specimen
from tracker.services.read import reconcile
from tracker.ui.screens.loan import LoanScreen
from tracker.ui.screens.manifest import ManifestScreen
from tracker.ui.screens.report import ReportScreen

LOAN = "KF-2026-014"  # the shark-tooth loan of the demo


def loan_specimens(lab: Lab) -> list[Specimen]:
    statement = select(Specimen).join(Loan).where(Loan.reference == LOAN).order_by(Specimen.id)
    return query(lab, statement)


async def open_loan(pilot: Pilot[None], key: str) -> None:
    """Loans overview → the demo's shark-tooth loan → the screen behind ``key``."""
    await settle(pilot)
    pilot.app.push_screen(LoanScreen(LOAN))
    await settle(pilot)
    await pilot.press(key)
    await settle(pilot)


async def open_report(pilot: Pilot[None]) -> ReportScreen:
    """The loan's return report, drawn."""
    await open_loan(pilot, "R")
    screen = screen_as(pilot, ReportScreen)
    await until(pilot, lambda: screen.report is not None)
    return screen


async def open_manifest(pilot: Pilot[None], path: Path) -> ManifestScreen:
    """The loan's manifest import, with ``path`` in its file field."""
    await open_loan(pilot, "I")
    screen = screen_as(pilot, ManifestScreen)
    screen.query_one("#f-file", Input).value = str(path)
    return screen


async def test_the_report_shows_every_specimen_then_writes_a_recorded_pdf(lab: Lab) -> None:
    start = head(lab)
    db = lab.open()
    (expected,) = reconcile.reconcile(db, LOAN)
    db.close()
    async with lab.app().run_test(size=(120, 40)) as pilot:
        screen = await open_report(pilot)
        table = screen.query_one("#report-specimens", DataTable)
        assert sorted(str(k.value) for k in table.rows) == sorted(
            s.public_id for s in loan_specimens(lab)
        )
        totals = text_of(screen.query_one("#report-totals", Static))
        # premise: a u of 0.00100 to 0.00354 mg keeps two significant digits, 4 decimals
        assert 0.00100 <= expected.drilled_u_mg < 0.00355
        mg, u_mg = expected.drilled_mg, expected.drilled_u_mg
        assert f"drilled {mg:.4f} ± {u_mg:.4f} mg" in totals
        assert events_after(lab, start) == []  # looking writes nothing
        await pilot.press("ctrl+s")
        await until(pilot, lambda: "✓ wrote" in text_of(screen.query_one("#outcome", Static)))
    (event,) = events_after(lab, start)
    pdf = lab.out / f"{LOAN}-return-report-event-{event.seq}.pdf"  # named after its event
    assert pdf.read_bytes().startswith(b"%PDF")
    assert (event.action, event.operator) == ("report.generated", "ines")
    digest = hashlib.sha256(pdf.read_bytes()).hexdigest()
    assert json.loads(event.payload)["files"] == {"pdf": digest}
    anchor = json.loads((lab.out / f"{pdf.name}.anchor.json").read_text())
    assert (anchor["seq"], anchor["label"]) == (start, f"return report {LOAN}")  # its head
    assert not list(lab.out.glob(".*.partial"))


async def test_a_report_that_cannot_be_written_records_nothing(lab: Lab) -> None:
    start = head(lab)
    lab.out.rmdir()  # the output folder is gone: the file cannot be written
    async with lab.app().run_test(size=(120, 40)) as pilot:
        screen = await open_report(pilot)
        await pilot.press("ctrl+s")
        outcome = screen.query_one("#outcome", Static)
        await until(pilot, lambda: "✗" in text_of(outcome))
        assert text_of(outcome).startswith("✗ refused: file: ")
        assert "the output folder does not exist" in text_of(outcome)
    assert events_after(lab, start) == []
    assert not lab.out.exists()


async def test_a_typed_name_that_exists_is_refused_in_words_and_another_is_written(
    lab: Lab,
) -> None:
    start = head(lab)
    taken = lab.out / "for-the-lender.pdf"
    taken.write_bytes(b"an earlier report the lender already has")
    async with lab.app().run_test(size=(120, 40)) as pilot:
        screen = await open_report(pilot)
        name = screen.query_one("#report-file", Input)
        name.value = taken.name
        await pilot.press("ctrl+s")
        outcome = screen.query_one("#outcome", Static)
        await until(pilot, lambda: "✗" in text_of(outcome))
        said = text_of(outcome)  # (a long path is shortened in the middle)
        assert said.startswith("✗ refused: file: '/")
        assert "for-the-lender.pdf': already exists; type another file name" in said
        assert "nothing was written or recorded" in said
        assert events_after(lab, start) == []
        assert taken.read_bytes() == b"an earlier report the lender already has"
        name.value = "for-the-lender-2.pdf"  # the person picks another name
        name.focus()
        await pilot.press("enter")
        await until(pilot, lambda: "✓ wrote" in text_of(outcome))
    (event,) = events_after(lab, start)
    written = lab.out / "for-the-lender-2.pdf"
    digest = hashlib.sha256(written.read_bytes()).hexdigest()
    assert json.loads(event.payload)["files"] == {"pdf": digest}
    assert taken.read_bytes() == b"an earlier report the lender already has"
    assert sorted(p.name for p in lab.out.iterdir()) == [
        "for-the-lender-2.pdf",
        "for-the-lender-2.pdf.anchor.json",
        "for-the-lender.pdf",
    ]


async def test_two_reports_written_from_the_screen_get_two_names(lab: Lab) -> None:
    start = head(lab)
    async with lab.app().run_test(size=(120, 40)) as pilot:
        screen = await open_report(pilot)
        outcome = screen.query_one("#outcome", Static)
        for _ in range(2):
            await pilot.press("ctrl+s")
            await until(pilot, lambda: "✓ wrote" in text_of(outcome))
            outcome.update("")
    events = events_after(lab, start)
    assert [e.action for e in events] == ["report.generated"] * 2
    pdfs = sorted(p.name for p in lab.out.glob("*.pdf"))
    assert pdfs == sorted(f"{LOAN}-return-report-event-{e.seq}.pdf" for e in events)


MANIFEST = (
    "catalogNumber,institutionCode,scientificName,locality,preparations\n"
    "KFMNH P 20311,KFMNH,Otodontidae indet.,Ollen Brook pit (upper bed; invented),tooth\n"
    "KFMNH P 20399,KFMNH,Lamniformes indet.,Ollen Brook pit (invented),tooth\n"
)


async def test_a_manifest_is_previewed_row_by_row_then_imported(lab: Lab, tmp_path: Path) -> None:
    start = head(lab)
    before = {s.catalog_number: s for s in loan_specimens(lab)}
    assert "KFMNH P 20399" not in before and "KFMNH P 20311" in before
    path = tmp_path / "kf-list.csv"
    path.write_text(MANIFEST)
    async with lab.app().run_test(size=(120, 36)) as pilot:
        screen = await open_manifest(pilot, path)
        await pilot.press("enter")  # the path field has focus
        await until(pilot, lambda: screen.preview_view is not None)
        preview = screen.preview_view
        assert preview is not None
        actions = {r.catalog_number: r.action for r in preview.rows}
        assert actions == {"KFMNH P 20311": "update", "KFMNH P 20399": "create"}
        table = screen.query_one("#manifest-rows", DataTable)
        assert table.row_count == 2
        assert events_after(lab, start) == []  # the preview writes nothing
        await pilot.press("ctrl+s")
        await until(pilot, lambda: "✓ imported" in text_of(screen.query_one("#outcome", Static)))
    after = {s.catalog_number: s for s in loan_specimens(lab)}
    assert set(after) == set(before) | {"KFMNH P 20399"}
    assert after["KFMNH P 20311"].locality == "Ollen Brook pit (upper bed; invented)"
    assert after["KFMNH P 20399"].scientific_name == "Lamniformes indet."
    (event,) = events_after(lab, start)
    assert event.action == "manifest.imported"
    assert json.loads(event.payload)["created"] == [after["KFMNH P 20399"].public_id]


async def test_a_manifest_with_a_problem_is_refused_whole(lab: Lab, tmp_path: Path) -> None:
    start = head(lab)
    count = len(loan_specimens(lab))
    path = tmp_path / "kf-bad.csv"
    path.write_text(MANIFEST + ",KFMNH,Lamniformes indet.,Ollen Brook pit (invented),tooth\n")
    async with lab.app().run_test(size=(120, 36)) as pilot:
        screen = await open_manifest(pilot, path)
        await pilot.press("ctrl+s")
        outcome = screen.query_one("#outcome", Static)
        await until(pilot, lambda: "✗" in text_of(outcome))
        assert "1 problem(s)" in text_of(outcome) and "nothing was written" in text_of(outcome)
    assert events_after(lab, start) == []
    assert len(loan_specimens(lab)) == count


async def test_a_manifest_import_kept_waiting_by_another_writer_says_who_and_writes_nothing(
    lab: Lab, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("TRACKER_BUSY_WAIT", "0.3")  # read when the interface opens the database
    start = head(lab)
    path = tmp_path / "kf-list.csv"
    path.write_text(MANIFEST)
    async with lab.app().run_test(size=(160, 36)) as pilot:
        screen = await open_manifest(pilot, path)
        outcome = screen.query_one("#outcome", Static)
        with held(str(lab.db_path), "tomas", "enter batch sheet"):
            await pilot.press("ctrl+s")
            await until(pilot, lambda: "✗" in text_of(outcome))
        said = " ".join(text_of(outcome).split())  # as drawn, wrapped or not
        assert said.startswith('✗ the database is busy: tomas running "enter batch sheet" (')
        assert " since " in said and said.endswith("; try again")
        assert pilot.app.screen is screen  # still there: no traceback, no exit
        await pilot.press("ctrl+s")  # the same import, once the other writer is done
        await until(pilot, lambda: "✓ imported" in text_of(outcome))
    (event,) = events_after(lab, start)
    assert event.action == "manifest.imported"
