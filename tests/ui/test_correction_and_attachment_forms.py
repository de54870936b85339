"""The corrections of measured values, the photographs and documents kept with specimens and
loans, and labels printed again: each form reached from the palette (or its key), typed into
as a person types, and judged by what the database holds afterwards; each refusal by one line
naming the field and the value, with nothing written."""

from __future__ import annotations

import hashlib
import io
from decimal import Decimal
from pathlib import Path

from PIL import Image
from sqlalchemy import select
from sqlalchemy.orm import selectinload
from textual.widgets import DataTable, Input, Static

from tests.conftest import snapshot_counts
from tests.ui.conftest import (
    Lab,
    events_after,
    head,
    query,
    scan,
    screen_as,
    settle,
    text_of,
    type_into,
    until,
)
from tests.ui.test_more_forms import KESTREL, fill_and_save
from tracker.domain.models import (
    Concentration,
    Correction,
    Cut,
    Label,
    LabelJob,
    LabelJobKind,
    LabelStatus,
    Loan,
    LoanDocument,
    Solution,
    Specimen,
    SpecimenPhoto,
)
from tracker.ui.app import PALETTE, bench_form
from tracker.ui.screens.confirm import ConfirmScreen
from tracker.ui.screens.form import FormScreen
from tracker.ui.screens.labels import LabelsScreen
from tracker.ui.screens.labels_reprint import ReprintLabelsScreen

NEW_FORMS = (
    "correct_concentration",
    "correct_recovery",
    "specimen_photo",
    "loan_attach",
    "labels_reprint",
)


def counts(lab: Lab) -> dict[str, int]:
    db = lab.open()
    try:
        return snapshot_counts(db)
    finally:
        db.close()


def png_file(folder: Path, name: str) -> Path:
    """A small invented photograph (a brown disc on cream) written to ``folder``."""
    image = Image.new("RGB", (24, 16), (236, 230, 214))
    image.putpixel((12, 8), (120, 96, 70))
    buffer = io.BytesIO()
    image.save(buffer, format="PNG")
    path = folder / name
    path.write_bytes(buffer.getvalue())
    return path


def test_every_new_form_has_a_palette_entry_that_opens_it() -> None:
    actions = {action for _, _, action in PALETTE}
    for form in NEW_FORMS:
        assert f"bench('{form}')" in actions
        assert isinstance(bench_form(form), FormScreen)


def first_solution_with_calcium(lab: Lab) -> tuple[Solution, Concentration]:
    with_values = select(Solution).options(selectinload(Solution.concentrations))
    for solution in query(lab, with_values.order_by(Solution.id)):
        calcium = [c for c in solution.concentrations if c.element == "Ca"]
        if calcium:
            return solution, calcium[-1]
    raise AssertionError("the demo has no solution with a Ca concentration")


async def test_a_concentration_corrected_with_its_reason(lab: Lab) -> None:
    solution, current = first_solution_with_calcium(lab)
    right = current.value_ug_per_g + Decimal("20.5")  # the value as it should have been
    start = head(lab)
    said = await fill_and_save(
        lab,
        "ines",  # a manager: the entry is another technician's
        "correct_concentration",
        {
            "solution": solution.public_id,
            "element": "Ca",
            "value": f"{right} ug/g",
            "relative-uncertainty-percent": "2",
            "reason": "dilution factor applied twice",
        },
    )
    assert said.startswith(f"✓ {solution.public_id} concentration Ca corrected"), said
    (row,) = query(lab, select(Concentration).where(Concentration.supersedes_id == current.id))
    assert row.value_ug_per_g == right
    assert row.u_ug_per_g == right * Decimal("0.02")
    (correction,) = query(lab, select(Correction).where(Correction.item_ref == solution.public_id))
    assert correction.reason == "dilution factor applied twice"
    assert [e.action for e in events_after(lab, start)] == ["concentration.corrected"]


async def test_a_concentration_of_an_element_never_measured_is_refused(lab: Lab) -> None:
    solution, _ = first_solution_with_calcium(lab)
    before = counts(lab)
    said = await fill_and_save(
        lab,
        "ines",
        "correct_concentration",
        {
            "solution": solution.public_id,
            "element": "Sr",  # only Ca was measured on the demo
            "value": "300 ug/g",
            "relative-uncertainty-percent": "2",
            "reason": "dilution factor applied twice",
        },
    )
    assert said.startswith("✗ refused: element: 'Sr': no concentration of it"), said
    assert counts(lab) == before


async def test_a_recovery_corrected_with_its_reason(lab: Lab) -> None:
    cut = query(lab, select(Cut).where(Cut.recovered_ug > Decimal(1)).order_by(Cut.id).limit(1))[0]
    right = cut.recovered_ug + Decimal("0.04")
    start = head(lab)
    said = await fill_and_save(
        lab,
        "ines",
        "correct_recovery",
        {
            "cut": cut.public_id,
            "recovered": f"{right} ug",
            "relative-uncertainty-percent": "1.5",
            "reason": "sequence row swapped with the blank",
        },
    )
    assert said.startswith(f"✓ {cut.public_id} cut recovery corrected"), said
    (after,) = query(lab, select(Cut).where(Cut.id == cut.id))
    assert after.recovered_ug == right
    assert after.recovered_u_ug == right * Decimal("0.015")
    (correction,) = query(lab, select(Correction).where(Correction.item_ref == cut.public_id))
    assert correction.reason == "sequence row swapped with the blank"
    assert [e.action for e in events_after(lab, start)] == ["cut.corrected"]


async def test_a_recovery_that_is_not_an_amount_is_refused(lab: Lab) -> None:
    cut = query(lab, select(Cut).order_by(Cut.id).limit(1))[0]
    before = counts(lab)
    said = await fill_and_save(
        lab,
        "ines",
        "correct_recovery",
        {"cut": cut.public_id, "recovered": "plenty", "reason": "sequence row swapped"},
    )
    assert said.startswith("✗ refused: recovered: 'plenty': "), said
    assert counts(lab) == before


def kestrel_specimen(lab: Lab) -> Specimen:
    in_kestrel = select(Specimen).join(Loan).where(Loan.reference == KESTREL)
    first: Specimen = query(lab, in_kestrel.order_by(Specimen.id).limit(1))[0]
    return first


async def test_a_specimen_photo_attached_from_a_typed_path(lab: Lab, tmp_path: Path) -> None:
    specimen = kestrel_specimen(lab)
    photo = png_file(tmp_path, "crown-front.png")
    start = head(lab)
    said = await fill_and_save(
        lab,
        "tomas",
        "specimen_photo",
        {
            "specimen": specimen.catalog_number,  # a catalogue number names it too
            "photo": str(photo),
            "caption": "crown, labial view",
        },
    )
    assert said.startswith("saved"), said  # the specimen opened in its place
    (kept,) = query(
        lab,
        select(SpecimenPhoto)
        .where(SpecimenPhoto.specimen_id == specimen.id)
        .options(selectinload(SpecimenPhoto.document)),
    )
    assert kept.document.sha256 == hashlib.sha256(photo.read_bytes()).hexdigest()
    assert (kept.stage, kept.caption, kept.document.filename) == (
        "receipt",  # the form's default, as the command line's
        "crown, labial view",
        "crown-front.png",
    )
    assert [e.action for e in events_after(lab, start)] == ["specimen.photographed"]


async def test_a_photo_path_naming_no_file_is_refused_in_one_line(lab: Lab, tmp_path: Path) -> None:
    missing = tmp_path / "no-such-photo.jpg"
    before = counts(lab)
    said = await fill_and_save(
        lab,
        "tomas",
        "specimen_photo",
        {"specimen": kestrel_specimen(lab).public_id, "photo": str(missing)},
    )
    # the field, then the path (a long one shortened in the middle, ending in its name)
    assert said.startswith("✗ refused: photo: '"), said
    assert f"{missing.name}': cannot be read" in said, said
    assert "\n" not in said.strip()
    assert counts(lab) == before


async def test_a_document_attached_to_a_loan(lab: Lab, tmp_path: Path) -> None:
    letter = tmp_path / "extension-letter.txt"
    letter.write_text("An invented letter granting three more months.\n", encoding="utf-8")
    start = head(lab)
    said = await fill_and_save(
        lab,
        "ines",
        "loan_attach",
        {"loan": KESTREL, "document": str(letter), "role": "correspondence"},
    )
    assert said.startswith("✓ extension-letter.txt kept as correspondence"), said
    (loan,) = query(lab, select(Loan).where(Loan.reference == KESTREL))
    linked = query(
        lab,
        select(LoanDocument)
        .where(LoanDocument.loan_id == loan.id, LoanDocument.role == "correspondence")
        .options(selectinload(LoanDocument.document)),
    )
    digest = hashlib.sha256(letter.read_bytes()).hexdigest()
    assert [link.document.sha256 for link in linked] == [digest]
    assert [e.action for e in events_after(lab, start)] == ["loan.document_attached"]


async def test_a_document_path_that_is_a_folder_is_refused_in_one_line(
    lab: Lab, tmp_path: Path
) -> None:
    before = counts(lab)
    said = await fill_and_save(
        lab, "ines", "loan_attach", {"loan": KESTREL, "document": str(tmp_path), "role": "other"}
    )
    assert said.startswith("✗ refused: document: '"), said
    assert f"{tmp_path.name}': cannot be read" in said, said
    assert counts(lab) == before


def reprint_jobs(lab: Lab) -> list[LabelJob]:
    return query(lab, select(LabelJob).where(LabelJob.kind == LabelJobKind.REPRINT))


async def test_labels_reprinted_from_the_palette_after_asking(lab: Lab) -> None:
    solution, _ = first_solution_with_calcium(lab)
    cut = query(lab, select(Cut).order_by(Cut.id).limit(1))[0]
    queued = query(lab, select(Label).where(Label.status == LabelStatus.QUEUED))
    start = head(lab)
    said = await fill_and_save(
        lab,
        "tomas",
        "labels_reprint",
        {
            "items": f"{solution.public_id}, {cut.public_id}",
            "reason": "label smudged by acid",
            "start": "13",  # typed over the 1 the form begins with
        },
    )
    assert said.startswith("✓ reprinted 2 label(s) on 1 page(s)"), said
    (job,) = reprint_jobs(lab)
    assert (job.reason, job.start, job.stock) == ("label smudged by acid", 13, "a4-65")
    (pdf,) = lab.out.glob("labels-*.pdf")
    assert str(pdf) in said
    assert hashlib.sha256(pdf.read_bytes()).hexdigest() == job.sha256
    assert [e.action for e in events_after(lab, start)] == ["labels.reprinted"]
    still = query(lab, select(Label).where(Label.status == LabelStatus.QUEUED))
    assert {label.id for label in still} == {label.id for label in queued}  # the queue stays


async def test_a_reprint_on_an_unknown_stock_is_refused_after_asking(lab: Lab) -> None:
    solution, _ = first_solution_with_calcium(lab)
    before = counts(lab)
    said = await fill_and_save(
        lab,
        "tomas",
        "labels_reprint",
        {"items": solution.public_id, "reason": "label torn", "stock": "a4-99"},
    )
    assert said.startswith("✗ refused: stock: 'a4-99': no such stock"), said
    assert counts(lab) == before
    assert list(lab.out.iterdir()) == []


async def test_the_highlighted_label_reprinted_from_the_labels_screen(lab: Lab) -> None:
    queued = query(lab, select(Label).where(Label.status == LabelStatus.QUEUED).order_by(Label.id))
    async with lab.app("tomas").run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.press("f5")
        await settle(pilot)
        labels = screen_as(pilot, LabelsScreen)
        labels.query_one("#start", Input).value = "5"
        table = labels.query_one("#queue", DataTable)
        table.focus()
        table.move_cursor(row=1)
        await pilot.press("R")
        await settle(pilot)
        form = screen_as(pilot, ReprintLabelsScreen)
        assert form.query_one("#f-items", Input).value == queued[1].item_ref
        assert form.query_one("#f-start", Input).value == "5"
        form.query_one("#f-items", Input).focus()
        await scan(pilot, queued[2].item_ref)  # a scan into the items adds to them
        await type_into(pilot, "reason", "label peeled off in the freezer")
        await pilot.press("ctrl+s")
        await settle(pilot)
        screen_as(pilot, ConfirmScreen)
        await pilot.press("y")
        outcome = form.query_one("#outcome", Static)
        await until(pilot, lambda: "reprinted" in text_of(outcome))
    (job,) = reprint_jobs(lab)
    assert (job.reason, job.start) == ("label peeled off in the freezer", 5)
    printed = query(lab, select(Label).where(Label.job_id == job.id).order_by(Label.id))
    assert [label.item_ref for label in printed] == [queued[1].item_ref, queued[2].item_ref]


async def test_a_form_opened_on_an_item_takes_it_where_it_fits(lab: Lab) -> None:
    solution, _ = first_solution_with_calcium(lab)
    async with lab.app("ines").run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await scan(pilot, solution.public_id)
        await settle(pilot)
        await pilot.app.run_action("bench('correct_concentration')")
        await settle(pilot)
        form = screen_as(pilot, FormScreen)
        assert form.query_one("#f-solution", Input).value == solution.public_id
        await pilot.press("escape")
        await settle(pilot)
        await pilot.app.run_action("bench('correct_recovery')")  # a cut's form: not a solution
        await settle(pilot)
        form = screen_as(pilot, FormScreen)
        assert form.query_one("#f-cut", Input).value == ""
