"""Manifests, return reports and shipments through the services, on SQLite and PostgreSQL.

Masses are worked by hand in comments (mass by difference: gross − tare). Manifests are
written here with Darwin Core headings (TDWG); lenders, catalogue numbers and places are
invented. "Nothing written" is checked with ``snapshot_counts`` before and after.
"""

from __future__ import annotations

import hashlib
import io
from typing import Any

import pytest
from openpyxl import Workbook
from PIL import Image

from tests import factories as make
from tests.conftest import Counts
from tracker.db.database import Database
from tracker.domain.errors import InputError, RuleViolation
from tracker.services.bench import custody
from tracker.services.ledger import chain
from tracker.services.loans import manifests, shipments, specimens
from tracker.services.read import reports
from tracker.services.read.reconcile import reconcile

HEAD = "catalogNumber,scientificName,preparations,locality,eventDate,decimalLatitude,ageMaxMa"
ROWS = [
    "INV 1,Lamniformes indet.,tooth,Brackwater Pit (invented),1991-05-02,-38.5,15.0",
    "INV 2,Otodontidae indet.,tooth,Brackwater Pit (invented),1991-05-03,-38.6,15.0",
]


def csv_bytes(*rows: str) -> bytes:
    return ("\n".join([HEAD, *rows]) + "\n").encode()


def request(loan: str, content: bytes, filename: str = "list.csv") -> dict[str, Any]:
    return {"loan": loan, "filename": filename, "content": content}


def xlsx_bytes(*rows: str) -> bytes:
    book = Workbook()
    sheet = book.active
    assert sheet is not None
    for line in [HEAD, *rows]:
        cells: list[Any] = []
        for cell in line.split(","):
            try:
                cells.append(float(cell))
            except ValueError:
                cells.append(cell)
        sheet.append(cells)
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()


# ---------------------------------------------------------------- manifests


def test_manifest_imports_once_then_updates_only_the_changed_cell(
    db: Database, counts: Counts
) -> None:
    loan = make.loan(db)
    preview = manifests.preview_manifest(db, request(loan, csv_bytes(*ROWS)))
    assert (preview.create, preview.update, preview.problems) == (2, 0, 0)
    assert preview.kept_as_extra == ["decimalLatitude", "eventDate"]  # not specimen columns
    first = manifests.import_manifest(db, "boss", request(loan, csv_bytes(*ROWS)))
    assert len(first.created) == 2 and first.event_seq is not None
    before = counts()
    again = manifests.import_manifest(db, "boss", request(loan, csv_bytes(*ROWS)))
    assert (again.created, again.updated, again.event_seq) == ([], [], None)
    assert counts() == before
    same_as_xlsx = manifests.preview_manifest(db, request(loan, xlsx_bytes(*ROWS), "list.xlsx"))
    assert (same_as_xlsx.unchanged, same_as_xlsx.problems) == (2, 0)
    edited = ROWS[1].replace("Otodontidae indet.", "Otodus sp.")
    outcome = manifests.import_manifest(db, "boss", request(loan, csv_bytes(ROWS[0], edited)))
    assert (outcome.created, outcome.updated) == ([], [first.created[1]])
    (row,) = [r for r in outcome.preview.rows if r.action == "update"]
    assert row.changes == {"scientific_name": ["Otodontidae indet.", "Otodus sp."]}
    after = counts()
    assert after["specimen"] == before["specimen"]
    assert after["custody_event"] == before["custody_event"] + 1
    (event,) = chain.recent_events(db, 1)
    assert event.action == "manifest.imported" and event.seq == outcome.event_seq
    assert event.payload["sha256"] == hashlib.sha256(csv_bytes(ROWS[0], edited)).hexdigest()


def test_a_manifest_with_problems_writes_nothing(db: Database, counts: Counts) -> None:
    loan = make.loan(db)
    bad = csv_bytes(
        ROWS[0],
        ROWS[0],  # row 3 repeats row 2
        ROWS[1].replace("1991-05-03", "1991-05/1991-03"),  # row 4: an interval ending first
        ROWS[1].replace("INV 2", "INV 5").replace("1991-05-03", "03/05/1991"),  # row 5
        ROWS[1].replace("INV 2", "INV 6").replace("-38.6", "south"),  # row 6
        ROWS[1].replace("INV 2", ""),  # row 7: no catalogue number
    )
    preview = manifests.preview_manifest(db, request(loan, bad))
    assert preview.problems == 5
    assert [r.row for r in preview.rows if r.action == "error"] == [3, 4, 5, 6, 7]
    before = counts()
    with pytest.raises(InputError, match="5 problem"):
        manifests.import_manifest(db, "boss", request(loan, bad))
    legacy = "catalogNumber,locality\nINV 9,Caf\u00e9 pit\n".encode("cp1252")
    with pytest.raises(InputError, match="not UTF-8"):
        manifests.import_manifest(db, "boss", request(loan, legacy))
    too_many = b"catalogNumber\n" + b"".join(b"R%d\n" % i for i in range(100_001))
    with pytest.raises(InputError, match="more than 100,000 rows"):
        manifests.preview_manifest(db, request(loan, too_many))
    assert counts() == before


def test_columns_absent_from_the_manifest_are_left_alone(db: Database) -> None:
    loan = make.loan(db)
    specimen = make.specimen(db, loan)  # scientific name Lamniformes indet., element tooth
    (catalog,) = [s.catalog_number for s in specimens.list_specimens(db, loan) if s.id == specimen]
    content = f"catalogNumber,locality\n{catalog},Brackwater Pit (invented)\n".encode()
    (row,) = manifests.preview_manifest(db, request(loan, content)).rows
    assert row.changes == {"locality": [None, "Brackwater Pit (invented)"]}


# ---------------------------------------------------------------- the return report


def test_report_totals_are_reconcile_totals(db: Database, counts: Counts) -> None:
    loan = make.loan(db)
    first, second, _unsampled = (make.specimen(db, loan) for _ in range(3))
    kept = make.powder(db, first, "2.500")  # 1002.500 − 1000.000 mg
    make.solution(db, kept, taken="1.000 mg")
    sent = make.powder(db, second, "1.800")
    custody.dispose(
        db,
        "boss",
        {
            "item": sent,
            "outcome": "returned",
            "reason": "unused powder",
            "residual_tare": "900.000 mg",
            "residual_gross": "901.800 mg",
        },
    )
    # by hand: removed 2.500 + 1.800 = 4.300 mg; dissolved 1.000; returned 901.800 − 900.000 =
    # 1.800; still held 2.500 − 1.000 = 1.500 mg
    report = reports.build_return_report(db, loan)
    (line,) = reconcile(db, loan)
    for key, by_hand in [
        ("drilled_mg", 4.3),
        ("dissolved_mg", 1.0),
        ("powder_returned_mg", 1.8),
        ("powder_on_hand_mg", 1.5),
    ]:
        assert getattr(report.totals, key) == pytest.approx(getattr(line, key), abs=1e-9)
        assert getattr(report.totals, key) == pytest.approx(by_hand, abs=1e-9), key
    lines = {s.id: s for s in line.specimen_lines}
    for entry in report.specimens:
        expected = lines[entry.id]
        assert entry.drilled_mg == pytest.approx(expected.drilled_mg, abs=1e-9)
        assert sum(p.dissolved_mg for p in entry.powders) == pytest.approx(expected.dissolved_mg)
        held = sum(p.left_mg for p in entry.powders if p.status == "available")
        assert held == pytest.approx(expected.powder_on_hand_mg, abs=1e-9)
    head = chain.verify(db)
    assert (report.ledger.seq, report.ledger.hash, report.ledger.intact) == (
        head.head_seq,
        head.head_hash,
        True,
    )
    before = counts()
    digest = hashlib.sha256(b"report bytes").hexdigest()
    recorded = reports.record_report(
        db,
        "boss",
        {
            "loan": loan,
            "files": {"pdf": digest},
            "head_seq": head.head_seq,
            "head_hash": head.head_hash,
        },
    )
    after = counts()
    assert {k: after[k] - before[k] for k in after if after[k] != before[k]} == {
        "custody_event": 1,
        "ledger_head": 1,
    }
    assert recorded.item.files == {"pdf": digest} and chain.verify(db).ok


# ---------------------------------------------------------------- shipments and photos


def test_shipment_rules(db: Database, counts: Counts) -> None:
    loan, other = make.loan(db), make.loan(db)
    today = db.clock().date().isoformat()

    def parcel(loan_ref: str, direction: str, day: str = today) -> str:
        data = {"loan": loan_ref, "direction": direction, "shipped_on": day}
        return shipments.add_shipment(db, "boss", data).item.id

    out, incoming, foreign = (
        parcel(loan, "outgoing"),
        parcel(loan, "incoming"),
        parcel(other, "outgoing"),
    )
    specimen = make.specimen(db, loan)
    powder = make.powder(db, specimen, "1.000")
    before = counts()
    with pytest.raises(InputError, match="in the future"):
        parcel(loan, "outgoing", "2099-01-01")
    for wrong, reason in [(foreign, "another loan"), (incoming, "incoming shipment")]:
        with pytest.raises(RuleViolation, match=reason):
            specimens.return_specimen(
                db, "boss", {"specimen": specimen, "condition": "ok", "shipment": wrong}
            )
        with pytest.raises(RuleViolation, match=reason):
            custody.dispose(
                db,
                "boss",
                {"item": powder, "outcome": "returned", "reason": "back", "shipment": wrong},
            )
    with pytest.raises(InputError, match="only returned powder"):
        custody.dispose(
            db, "boss", {"item": powder, "outcome": "destroyed", "reason": "spent", "shipment": out}
        )
    assert counts() == before
    custody.dispose(
        db, "boss", {"item": powder, "outcome": "returned", "reason": "back", "shipment": out}
    )
    specimens.return_specimen(
        db, "boss", {"specimen": specimen, "condition": "ok", "shipment": out}
    )
    (entry,) = reports.build_return_report(db, loan).specimens
    assert entry.return_shipment == out and [p.shipment for p in entry.powders] == [out]
    custody.mark_loan_returned(db, "boss", {"loan": loan})
    with pytest.raises(RuleViolation, match="already returned"):
        parcel(loan, "outgoing")


def test_photos_are_kept_once_and_reach_the_report(db: Database) -> None:
    loan = make.loan(db)
    specimen = make.specimen(db, loan)
    buffer = io.BytesIO()
    Image.new("RGB", (12, 8), (200, 180, 150)).save(buffer, format="PNG")
    content = buffer.getvalue()
    photo = {"filename": "crown.png", "content": content}
    shipments.add_photo(db, "tech", {"specimen": specimen, "stage": "receipt", "photo": photo})
    with pytest.raises(RuleViolation, match="already kept"):
        shipments.add_photo(db, "tech", {"specimen": specimen, "stage": "return", "photo": photo})
    with pytest.raises(InputError, match="photos are JPEG"):
        shipments.add_photo(
            db,
            "tech",
            {
                "specimen": specimen,
                "stage": "other",
                "photo": {"filename": "n.txt", "content": b"text"},
            },
        )
    report, files = reports.attach_photos(db, reports.build_return_report(db, loan))
    digest = hashlib.sha256(content).hexdigest()
    assert [(p.stage, p.sha256) for p in report.specimens[0].photos] == [("receipt", digest)]
    assert files == {digest: content}
