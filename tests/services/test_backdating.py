"""Dated entries: never before what they depend on, never further back than the lab's window
without a manager, and a drill typed in after the due date is overdue (both backends).

The test clock starts at 2026-01-05 09:00 UTC and ticks one second per reading; the
factory loan was received on 2026-01-02. Every time below is written out by hand against
that clock; refusals compare ``snapshot_counts`` before and after.
"""

from __future__ import annotations

import io
import json
from collections.abc import Callable
from functools import partial
from typing import Any

import pytest
from PIL import Image
from pypdf import PdfReader
from sqlalchemy import select

from tests import factories as make
from tests.conftest import Counts
from tests.reliability.report import record
from tests.services.test_instrument import bench, do_import, session_of
from tracker.db.database import Database
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.models import BackdatedEntry, CustodyEvent
from tracker.output.report_files import render
from tracker.services.admin import backdating
from tracker.services.bench import chemistry, custody, drilling, solutions
from tracker.services.ledger import chain
from tracker.services.loans import shipments, specimens
from tracker.services.read import reports
from tracker.services.read.reconcile import reconcile
from tracker.services.read.report_views import ReturnReport

BACKDATED = "backdated entry"
FOUND: dict[str, list[str]] = {}  # backend -> what each found case did, for the reliability row


def drill(db: Database, specimen: str, actor: str = "tech", **extra: object) -> Any:
    request = {"specimen": specimen, "tissue": "enamel", "tare": "1000.000 mg"}
    return drilling.drill(db, actor, request | {"gross": "1000.500 mg"} | extra)


def refused(counts: Counts, kind: type[Exception], match: str, action: Callable[[], object]) -> str:
    """The action is refused with ``kind`` matching ``match`` and writes nothing."""
    before = counts()
    with pytest.raises(kind, match=match) as caught:
        action()
    assert counts() == before
    return str(caught.value)


def note(db: Database, case: str) -> None:
    """Add this case to the reliability row (cases named "depends: X" are summed up)."""
    FOUND.setdefault(db.backend, []).append(case)
    backends = ", ".join(sorted(FOUND))
    cases = sorted({c for found in FOUND.values() for c in found})
    kinds = [c.removeprefix("depends: ") for c in cases if c.startswith("depends: ")]
    found = [c for c in cases if not c.startswith("depends: ")]
    if kinds:
        found.append(f"{', '.join(kinds)} dated before what they depend on: refused")
    record(
        "backdating",
        f"{len(cases)} cases on {backends}",
        "; ".join(found) + " — nothing written on any refusal",
    )


# ---------------------------------------------------------------- the three cases found


def test_a_drill_dated_1999_is_refused(db: Database, counts: Counts) -> None:
    spec = make.specimen(db, make.loan(db))
    for actor in ("tech", "boss"):  # a manager cannot date it there either
        line = refused(
            counts,
            RuleViolation,
            "was checked in",
            partial(drill, db, spec, actor, drilled_at="1999-06-01T10:00:00Z"),
        )
        assert line.startswith("drilled-at: '1999-06-01T10:00:00.000000Z': is before ")
        assert f"{spec} was checked in (2026-01-05T09:00:" in line
    note(db, "a drill dated 1999: refused (before the check-in)")


def test_a_drill_dated_before_the_check_in_is_refused(db: Database, counts: Counts) -> None:
    spec = make.specimen(db, make.loan(db), received_at="2026-01-04T12:00:00Z")
    line = refused(
        counts,
        RuleViolation,
        "is before",
        lambda: drill(db, spec, drilled_at="2026-01-04T11:59:00Z"),
    )
    assert line == (
        f"drilled-at: '2026-01-04T11:59:00.000000Z': is before {spec} was checked in "
        "(2026-01-04T12:00:00.000000Z)"
    )
    drill(db, spec, drilled_at="2026-01-04T12:00:00Z")  # the same minute is fine
    note(db, "a drill dated before its specimen's check-in: refused")


def test_an_overdue_drill_re_entered_the_day_before_the_due_date_is_refused(
    db: Database, counts: Counts
) -> None:
    loan = make.loan(db, due_on="2026-01-04")
    spec = make.specimen(db, loan, received_at="2026-01-02T10:00:00Z")
    refused(counts, RuleViolation, "was due on 2026-01-04", lambda: drill(db, spec))
    line = refused(
        counts,
        RuleViolation,
        "recorded on 2026-01-05",
        lambda: drill(db, spec, drilled_at="2026-01-03T16:00:00Z"),
    )
    assert line.startswith("drilled-at: '2026-01-03': ")
    refused(  # a manager too: only an override with a reason gets past a due date
        counts,
        RuleViolation,
        "recorded on 2026-01-05",
        lambda: drill(db, spec, "boss", drilled_at="2026-01-03T16:00:00Z"),
    )
    preview = drilling.preview_drill(
        db,
        {
            "specimen": spec,
            "tare": "1000.000 mg",
            "gross": "1000.500 mg",
            "drilled_at": "2026-01-03T16:00:00Z",
        },
    )
    assert not preview.within and "recorded on 2026-01-05" in preview.violations[0]
    note(db, "an overdue drill re-entered dated the day before the due date: refused")


# ---------------------------------------------------------------- the window and its manager


def test_a_backdated_entry_needs_a_manager_keeps_both_times_and_is_flagged(
    db: Database, counts: Counts
) -> None:
    loan = make.loan(db)
    spec = make.specimen(db, loan, received_at="2026-01-02T10:00:00Z")  # 71 h back: < 4 days
    other = make.specimen(db, loan)
    assert BACKDATED not in reconcile(db, loan)[0].flags
    backdating.set_backdating_window(db, "boss", {"window": "1 day"})
    stated = "2026-01-03T10:00:00Z"  # 47 h before the clock: beyond one day
    line = refused(
        counts, RuleViolation, "manager role", lambda: drill(db, spec, drilled_at=stated)
    )
    assert line.startswith("operator: 'tech': dating an entry 2026-01-03T10:00:00.000000Z")
    assert "more than 1 day back" in line and "ask a manager (boss)" in line

    done = drill(db, spec, "boss", drilled_at=stated)
    (event,) = chain.recent_events(db, 1)
    assert event.seq == done.event_seq and event.action == "powder.drilled"
    assert event.at.isoformat().startswith("2026-01-05T09:")  # the recording time
    assert event.payload["drilled_at"] == "2026-01-03T10:00:00+00:00"
    assert event.payload["backdated"] == {
        "field": "drilled_at",
        "stated_at": "2026-01-03T10:00:00.000000Z",
        "window_hours": 24,
    }
    with db.read_session() as session:
        (row,) = session.scalars(select(BackdatedEntry)).all()
        assert (row.event_seq, row.item_ref, row.field) == (event.seq, done.item.id, "drilled_at")
        assert row.recorded_at == event.at and row.recorded_by == "boss"
        assert row.stated_at.isoformat() == "2026-01-03T10:00:00+00:00"

    (books,) = reconcile(db, loan)
    assert BACKDATED in books.flags
    lines = {s.id: s.flags for s in books.specimen_lines}
    assert BACKDATED in lines[spec] and BACKDATED not in lines[other]
    assert BACKDATED in reconcile(db, loan, specimens=False)[0].flags  # the overview's path

    report = reports.build_return_report(db, loan)
    assert BACKDATED in report.flags
    (entry,) = report.backdated
    assert (entry.item, entry.specimen, entry.recorded_by) == (done.item.id, spec, "boss")
    assert entry.stated_at.isoformat() == "2026-01-03T10:00:00+00:00"
    assert entry.recorded_at == event.at
    text = " ".join(page.extract_text() for page in PdfReader(io.BytesIO(pdf(report))).pages)
    assert "Entries dated back" in text and "2026-01-03 10:00 UTC" in text
    assert f"#{event.seq}" in text and BACKDATED in text
    assert chain.verify(db).ok
    note(db, "a manager's drill dated 47 h back (window 1 day): accepted, flagged, both times kept")


def pdf(report: ReturnReport) -> bytes:
    return render(report, {}, "pdf")


def test_the_window_binds_every_dated_entry(db: Database, counts: Counts) -> None:
    """A check-in a week back from a technician is refused too; from a manager it is kept."""
    loan = make.loan(db, received_on="2025-12-20")
    spec = specimens.add_specimen(db, "boss", {"loan": loan, "catalog_number": "W 1"}).item.id
    check_in = {"specimen": spec, "condition": "complete", "received_at": "2025-12-29T10:00:00Z"}
    refused(counts, RuleViolation, "manager role", lambda: specimens.check_in(db, "tech", check_in))
    specimens.check_in(db, "boss", check_in)
    assert BACKDATED in reconcile(db, loan)[0].flags


def test_the_window_is_a_lab_setting_only_managers_change(db: Database, counts: Counts) -> None:
    shown = backdating.show_backdating_window(db)
    assert (shown.hours, shown.said, shown.default) == (96, "4 days", True)
    set_it = backdating.set_backdating_window
    refused(counts, RuleViolation, "manager role", lambda: set_it(db, "tech", {"window": "2 days"}))
    for bad in ("4", "four days", "0 h", "91 days"):
        refused(counts, InputError, "window", partial(set_it, db, "boss", {"window": bad}))
    refused(counts, RuleViolation, "already", lambda: set_it(db, "boss", {"window": "96 hours"}))
    done = set_it(db, "boss", {"window": "36 h"})
    assert (done.item.hours, done.item.said, done.item.default) == (36, "36 hours", False)
    with db.read_session() as session:  # the whole payload (event lists leave facts out)
        stored = session.scalars(select(CustodyEvent).order_by(CustodyEvent.seq.desc())).first()
    assert stored is not None
    payload = json.loads(stored.payload)
    facts = payload.pop("facts")
    assert payload == {"window_hours": 36, "previous_hours": 96}
    assert facts["created"]["lab_setting"]["backdating_window_hours"]["value"] == "36"
    assert backdating.show_backdating_window(db).hours == 36


# ---------------------------------------------------------------- what each entry depends on


def png() -> dict[str, object]:
    buffer = io.BytesIO()
    Image.new("RGB", (8, 8), (120, 110, 100)).save(buffer, format="PNG")
    return {"filename": "crown.png", "content": buffer.getvalue()}


def test_a_check_in_is_not_older_than_its_loan(db: Database, counts: Counts) -> None:
    loan = make.loan(db)  # received on 2026-01-02
    spec = make.specimen(db, loan, checked_in=False)
    request = {"specimen": spec, "condition": "ok", "received_at": "2026-01-01T23:00:00Z"}
    line = refused(
        counts, RuleViolation, "was received", lambda: specimens.check_in(db, "tech", request)
    )
    assert line == (
        f"received-at: '2026-01-01T23:00:00.000000Z': is before loan {loan} was received "
        "(2026-01-02)"
    )
    note(db, "depends: check-in")


def test_a_photo_is_not_older_than_the_check_in(db: Database, counts: Counts) -> None:
    spec = make.specimen(db, make.loan(db), received_at="2026-01-04T12:00:00Z")
    request = {"specimen": spec, "stage": "receipt", "photo": png()}
    early = request | {"taken_at": "2026-01-04T11:00:00Z"}
    refused(
        counts,
        RuleViolation,
        "taken-at: .* was checked in",
        lambda: shipments.add_photo(db, "tech", early),
    )
    shipments.add_photo(db, "tech", request | {"taken_at": "2026-01-04T12:30:00Z"})
    note(db, "depends: photo")


def test_a_return_is_not_older_than_the_last_drill(db: Database, counts: Counts) -> None:
    spec = make.specimen(db, make.loan(db), received_at="2026-01-04T12:00:00Z")
    drill(db, spec, drilled_at="2026-01-04T15:00:00Z")
    back = {"specimen": spec, "condition": "as received", "returned_at": "2026-01-04T14:00:00Z"}
    line = refused(
        counts, RuleViolation, "last drilled", lambda: specimens.return_specimen(db, "tech", back)
    )
    assert line.startswith("returned-at: '2026-01-04T14:00:00.000000Z': is before ")
    note(db, "depends: return")


def test_a_dissolution_is_not_older_than_its_drill(db: Database, counts: Counts) -> None:
    spec = make.specimen(db, make.loan(db), received_at="2026-01-04T12:00:00Z")
    powder = drill(db, spec, drilled_at="2026-01-04T15:00:00Z").item.id
    request = {
        "powder": powder,
        "acid": "2 M HNO3",
        "vial_tare": "5.0000 g",
        "vial_gross": "6.0000 g",
        "dissolved_at": "2026-01-04T14:59:00Z",
    }
    line = refused(
        counts, RuleViolation, "was drilled", lambda: solutions.dissolve(db, "tech", request)
    )
    assert line == (
        f"dissolved-at: '2026-01-04T14:59:00.000000Z': is before {powder} was drilled "
        "(2026-01-04T15:00:00.000000Z)"
    )
    note(db, "depends: dissolution")


def test_concentrations_and_aliquots_are_not_older_than_their_solution(
    db: Database, counts: Counts
) -> None:
    solution = make.solution(db, make.powder(db, make.specimen(db, make.loan(db))))
    early = "2026-01-05T08:00:00Z"  # the solution was dissolved at 09:00 and some seconds
    value = {"solution": solution, "element": "Ca", "value": "800 ug/g", "uncertainty": "8 ug/g"}
    refused(
        counts,
        RuleViolation,
        f"measured-at: .*{solution} was dissolved",
        lambda: solutions.record_concentration(db, "tech", value | {"measured_at": early}),
    )
    make.concentration(db, solution)
    take = {"solution": solution, "tare": "2.0000 g", "gross": "2.1000 g", "taken_at": early}
    refused(
        counts,
        RuleViolation,
        f"taken-at: .*{solution} was dissolved",
        lambda: solutions.take_aliquot(db, "tech", take),
    )
    note(db, "depends: concentration and aliquot")


def test_a_column_batch_is_not_older_than_its_aliquots(db: Database, counts: Counts) -> None:
    solution = make.solution(db, make.powder(db, make.specimen(db, make.loan(db))))
    make.concentration(db, solution)
    aliquot = make.aliquot(db, solution)  # taken on 2026-01-05
    batch = chemistry.create_batch(
        db,
        "tech",
        {
            "name": "Yesterday's columns",
            "performed_on": "2026-01-04",
            "element": "Ca",
            "resin": "DGA",
            "elution_scheme": "load, rinse, elute",
            "cut_names": "matrix,Ca",
        },
    ).item.id
    place = {"batch": batch, "kind": "sample", "aliquot": aliquot}
    line = refused(
        counts, RuleViolation, "was taken", lambda: chemistry.add_position(db, "tech", place)
    )
    assert line.startswith(
        f"performed-on: '2026-01-04': is before {aliquot} was taken (2026-01-05T"
    )
    note(db, "depends: column position")


def test_an_instrument_session_is_not_older_than_its_columns(db: Database, counts: Counts) -> None:
    setup = bench(db)  # its batch was performed on 2026-01-05
    content = session_of(setup.cut, [0.5])
    line = refused(
        counts,
        RuleViolation,
        "was performed",
        lambda: do_import(db, content, started_at="2026-01-04T10:00:00Z"),
    )
    assert line == (
        f"started-at: '2026-01-04T10:00:00.000000Z': is before batch {setup.batch} was "
        "performed (2026-01-05)"
    )
    do_import(db, content, started_at="2026-01-05T09:00:00Z")
    note(db, "depends: instrument session")


def test_a_loan_is_not_returned_before_its_last_specimen(db: Database, counts: Counts) -> None:
    loan = make.loan(db)
    spec = make.specimen(db, loan)
    specimens.return_specimen(db, "tech", {"specimen": spec, "condition": "as received"})
    line = refused(
        counts,
        RuleViolation,
        "the last of its specimens was returned",
        lambda: custody.mark_loan_returned(db, "boss", {"loan": loan, "returned_on": "2026-01-04"}),
    )
    assert line.startswith("returned-on: '2026-01-04': is before the last of its specimens")
    custody.mark_loan_returned(db, "boss", {"loan": loan, "returned_on": "2026-01-05"})
    note(db, "depends: loan return")
