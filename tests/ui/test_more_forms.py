"""The forms that once were the command line's alone: corrections, vials returned or
disposed of, shipments, and the end of a loan. Each is reached from the command palette's
action, typed into as a person types, and judged by what the database holds afterwards."""

from __future__ import annotations

import json
from decimal import Decimal

from sqlalchemy import select
from sqlalchemy.orm import selectinload
from textual.widgets import DataTable, Input, Static

from tests.ui.conftest import (
    Lab,
    events_after,
    head,
    query,
    screen_as,
    settle,
    text_of,
    type_into,
    until,
)
from tracker.domain.models import (
    ContainerStatus,
    Correction,
    Label,
    LabelStatus,
    Loan,
    LoanStatus,
    Location,
    Powder,
    Shipment,
    Specimen,
)
from tracker.ui.app import PALETTE, bench_form
from tracker.ui.screens.confirm import ConfirmScreen
from tracker.ui.screens.form import FormScreen
from tracker.ui.screens.labels import LabelsScreen
from tracker.ui.screens.labels_cancel import CancelLabelsScreen

KESTREL = "KF-2026-014"  # the demo's shark-tooth loan, open


async def fill_and_save(lab: Lab, operator: str, form: str, typed: dict[str, str]) -> str:
    """Open ``form`` through its palette action, type every value, save; the outcome line."""
    async with lab.app(operator).run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.app.run_action(f"bench('{form}')")
        await settle(pilot)
        screen = screen_as(pilot, FormScreen)
        for name, text in typed.items():
            await type_into(pilot, name, text)
        await pilot.press("ctrl+s")
        await settle(pilot)
        if isinstance(pilot.app.screen, ConfirmScreen):
            await pilot.press("y")
            await settle(pilot)
        if pilot.app.screen is not screen:
            return "saved: the form made way for what it made"
        return text_of(screen.query_one("#outcome", Static))


def test_every_form_has_a_palette_entry_that_opens_it() -> None:
    actions = {action for _, _, action in PALETTE}
    forms = (
        "correct_weighing",
        "dispose",
        "shipment",
        "loan_returned",
        "loan_close",
        "loan_amend",
        "labels_cancel",
    )
    for form in forms:
        assert f"bench('{form}')" in actions
        assert isinstance(bench_form(form), FormScreen)


async def test_a_weighing_corrected_with_its_reason(lab: Lab) -> None:
    powder = query(lab, select(Powder).order_by(Powder.id).limit(1))[0]
    start = head(lab)
    said = await fill_and_save(
        lab,
        "ines",  # a manager: the entry may be someone else's
        "correct_weighing",
        {
            "item": powder.public_id,
            "tare": f"{powder.tare_mg} mg",
            "gross": f"{powder.gross_mg + Decimal('0.100')} mg",  # 0.1 mg more than recorded
            "reason": "gross read from the wrong line",
        },
    )
    assert said.startswith(f"✓ {powder.public_id} powder mass corrected · ledger event #"), said
    (row,) = query(lab, select(Correction).where(Correction.item_ref == powder.public_id))
    assert Decimal(row.value["mass_mg"]) == powder.mass_mg + Decimal("0.100")
    assert row.reason == "gross read from the wrong line"
    assert [e.action for e in events_after(lab, start)] == ["powder.corrected"]


async def test_a_shipment_recorded_for_a_loan(lab: Lab) -> None:
    before = query(lab, select(Shipment))
    await fill_and_save(
        lab,
        "tomas",
        "shipment",
        {
            "loan": KESTREL,
            "direction": "outgoing",
            "shipped-on": "2026-11-30",
            "carrier": "Imaginary Couriers",
            "tracking": "IC 0042",
        },
    )
    after = query(lab, select(Shipment))
    (new,) = [s for s in after if s.id not in {b.id for b in before}]
    assert (new.carrier, new.tracking, new.shipped_on.isoformat()) == (
        "Imaginary Couriers",
        "IC 0042",
        "2026-11-30",
    )


async def test_closing_an_open_loan_is_asked_then_refused_in_words(lab: Lab) -> None:
    start = head(lab)
    outcome = await fill_and_save(
        lab, "ines", "loan_close", {"loan": KESTREL, "reason": "all powder returned"}
    )
    assert outcome.startswith("✗ refused: "), outcome
    (loan,) = query(lab, select(Loan).where(Loan.reference == KESTREL))
    assert loan.status is LoanStatus.OPEN
    assert events_after(lab, start) == []


async def test_a_loan_extended_by_a_manager(lab: Lab) -> None:
    with_terms = select(Loan).where(Loan.reference == KESTREL).options(selectinload(Loan.terms))
    (loan,) = query(lab, with_terms)
    versions = len(loan.terms)
    await fill_and_save(
        lab,
        "ines",
        "loan_amend",
        {
            "loan": KESTREL,
            "kind": "extension",
            "effective-from": "2026-11-30",
            "reason": "lender's letter of 2026-11-20",
            "due-on": "2027-12-31",
        },
    )
    (loan,) = query(lab, with_terms)
    assert len(loan.terms) == versions + 1
    assert max(t.due_on for t in loan.terms).isoformat() == "2027-12-31"


async def test_the_ledger_exported_and_anchored_from_the_interface(lab: Lab) -> None:
    last = head(lab)
    async with lab.app("ines").run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.app.run_action("ledger('export')")
        await until(pilot, lambda: any(lab.out.glob("ledger-2*.jsonl")))
        await pilot.app.run_action("ledger('anchor')")
        await until(pilot, lambda: any(lab.out.glob("ledger-anchor-*.json")))
    (exported,) = lab.out.glob("ledger-2*.jsonl")
    lines = exported.read_text(encoding="utf-8").splitlines()
    assert len(lines) == last and json.loads(lines[-1])["seq"] == last
    (anchor,) = lab.out.glob("ledger-anchor-*.json")
    kept = json.loads(anchor.read_text(encoding="utf-8"))
    assert kept["seq"] == last and kept["signed_by"] == "ines"


async def test_chosen_labels_print_and_one_is_cancelled_with_its_reason(lab: Lab) -> None:
    queued = [
        label.item_ref
        for label in query(
            lab, select(Label).where(Label.status == LabelStatus.QUEUED).order_by(Label.id)
        )
    ]
    assert len(queued) > 3
    async with lab.app("ines").run_test(size=(100, 30)) as pilot:
        await settle(pilot)
        await pilot.press("f5")
        await settle(pilot)
        screen = screen_as(pilot, LabelsScreen)
        table = screen.query_one("#queue", DataTable)
        table.focus()
        await pilot.press("space", "space")  # the first two
        await settle(pilot)
        assert screen.chosen == queued[:2]
        await pilot.press("p")  # chosen labels print at once
        await until(
            pilot, lambda: "✓ printed 2 label(s)" in text_of(screen.query_one("#outcome", Static))
        )
        await until(pilot, lambda: table.row_count == len(queued) - 2)
        table.move_cursor(row=0)
        await pilot.press("x")
        await settle(pilot)
        form = screen_as(pilot, CancelLabelsScreen)
        assert form.query_one("#f-items", Input).value == queued[2]
        await type_into(pilot, "reason", "scanned twice by mistake")
        await pilot.press("ctrl+s")
        await settle(pilot)
    printed = query(lab, select(Label).where(Label.status == LabelStatus.PRINTED))
    assert {label.item_ref for label in printed} >= set(queued[:2])
    still = query(lab, select(Label).where(Label.status == LabelStatus.QUEUED).order_by(Label.id))
    assert [label.item_ref for label in still] == queued[3:]


async def test_a_place_is_picked_by_typing_the_start_of_its_name(lab: Lab) -> None:
    """A location field offers the lab's places by name as the person types; → takes the
    offer, and the move is recorded to that place."""
    (place,) = query(lab, select(Location).where(Location.name == "Desiccator 3"))
    start = head(lab)
    async with lab.app("priya").run_test(size=(80, 24)) as pilot:
        await settle(pilot)
        await pilot.app.run_action("bench('move')")
        await settle(pilot)
        form = screen_as(pilot, FormScreen)
        await type_into(pilot, "item", "SP-00004-Q")
        await type_into(pilot, "to", "desic")
        await settle(pilot)
        await pilot.press("right")  # take the name offered
        assert form.query_one("#f-to", Input).value == "Desiccator 3"
        await pilot.press("ctrl+s")
        await settle(pilot)
    (event,) = events_after(lab, start)
    assert event.action == "item.moved"
    assert json.loads(event.payload)["to"].endswith(" / Desiccator 3")  # the place's path
    (specimen,) = query(lab, select(Specimen).where(Specimen.catalog_number == "KFMNH P 20311"))
    assert specimen.location_id == place.id


async def test_a_powder_kept_by_the_lab_with_the_lender_s_consent(lab: Lab) -> None:
    (powder,) = query(
        lab,
        select(Powder)
        .where(Powder.status == ContainerStatus.AVAILABLE)
        .order_by(Powder.id)
        .limit(1),
    )
    start = head(lab)
    said = await fill_and_save(
        lab,
        "priya",
        "dispose",
        {
            "item": powder.public_id,
            "outcome": "retained",
            "reason": "kept for a repeat run",
            "permission": "letter of 2026-11-02",
        },
    )
    assert "refused" not in said, said
    (after,) = query(lab, select(Powder).where(Powder.id == powder.id))
    assert after.status is ContainerStatus.RETAINED
    (event,) = events_after(lab, start)
    assert event.object_ref == powder.public_id and event.operator == "priya"
    assert json.loads(event.payload)["reason"] == "kept for a repeat run"


async def test_a_loan_with_specimens_on_hand_is_not_marked_returned(lab: Lab) -> None:
    start = head(lab)
    said = await fill_and_save(lab, "ines", "loan_returned", {"loan": KESTREL})
    assert said.startswith("✗ refused: "), said
    (loan,) = query(lab, select(Loan).where(Loan.reference == KESTREL))
    assert loan.status is LoanStatus.OPEN
    assert events_after(lab, start) == []


async def test_a_returned_loan_closed_by_a_manager(lab: Lab) -> None:
    start = head(lab)
    said = await fill_and_save(
        lab,
        "ines",
        "loan_close",
        {"loan": "NMFI-25-033", "reason": "results reported to the lender on 2027-04-02"},
    )
    assert "refused" not in said, said
    (loan,) = query(lab, select(Loan).where(Loan.reference == "NMFI-25-033"))
    assert loan.status is LoanStatus.CLOSED
    assert [e.action for e in events_after(lab, start)] == ["loan.closed"]
