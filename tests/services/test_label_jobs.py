"""Print and reprint jobs on SQLite and PostgreSQL: one ledger event each, the PDF's SHA-256
recorded, every QR code readable; refusals leave neither a record nor a file."""

from __future__ import annotations

import hashlib
import json
import os
import stat
from pathlib import Path

import pytest
from sqlalchemy import select

from tests import factories as make
from tests.conftest import Counts
from tests.qr_reading import decode, pdfium_pages
from tracker.db.database import Database
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.models import CustodyEvent
from tracker.output import jobs
from tracker.services.labels import handling
from tracker.services.ledger.chain import verify

DPI = 300


def _last_event(db: Database) -> CustodyEvent:
    with db.read_session() as session:
        event = session.scalars(select(CustodyEvent).order_by(CustodyEvent.seq.desc())).first()
        assert event is not None
        return event


def _lab(db: Database) -> list[str]:
    """A checked-in specimen, a powder, a solution and an aliquot: four queued labels."""
    spec = make.specimen(db, make.loan(db))
    powder = make.powder(db, spec)
    solution = make.solution(db, powder)
    make.concentration(db, solution)
    return [spec, powder, solution, make.aliquot(db, solution)]


def _decoded(pdf: Path) -> list[str]:
    # rasterised by pypdfium2, decoded by zxing-cpp: both independent of tracker
    return sorted(d.text for page in pdfium_pages(pdf.read_bytes(), DPI) for d in decode(page, DPI))


def test_printing_the_queue_is_one_event_with_the_pdfs_hash(
    db: Database, counts: Counts, tmp_path: Path
) -> None:
    items = _lab(db)
    before = counts()
    out = tmp_path / "sheet.pdf"
    outcome = jobs.print_queue(db, "tech", stock="a4-65", start=3, out=out)
    after = counts()
    assert after["ledger_head"] == before["ledger_head"] + 1
    assert after["label_job"] == before["label_job"] + 1 and after["label"] == before["label"]
    digest = hashlib.sha256(out.read_bytes()).hexdigest()  # the file as written
    event = _last_event(db)
    payload = json.loads(event.payload)
    assert (event.action, event.object_ref, event.seq) == (
        "labels.printed",
        outcome.job.id,
        outcome.event_seq,
    )
    assert payload["items"] == items and payload["stock"] == "a4-65"
    assert payload["sha256"] == outcome.job.sha256 == digest
    assert (payload["start"], payload["pages"], outcome.job.labels) == (3, 1, 4)
    assert _decoded(out) == sorted(items)
    assert handling.list_labels(db) == []  # nothing left in the queue
    printed = handling.list_labels(db, everything=True)
    assert {r.job for r in printed} == {outcome.job.id} and {r.status for r in printed} == {
        "printed"
    }
    assert outcome.printer is None
    assert not list(tmp_path.glob(".*partial"))  # the staged file was renamed into place
    umask = os.umask(0)
    os.umask(umask)
    assert stat.S_IMODE(out.stat().st_mode) == 0o666 & ~umask  # the mode any new file gets
    assert verify(db).ok


def test_printing_an_empty_queue_is_refused_and_writes_nothing(
    db: Database, counts: Counts, tmp_path: Path
) -> None:
    before = counts()
    folder = tmp_path / "out"
    folder.mkdir()
    with pytest.raises(RuleViolation, match="no labels are queued"):
        jobs.print_queue(db, "tech", stock="a4-65", out=folder / "x.pdf")
    assert counts() == before and list(folder.iterdir()) == []


def _bad_stocks(tmp_path: Path) -> Path:
    path = tmp_path / "lab-stocks.toml"
    path.write_text(
        "[stock.poster]\npage_width_mm = 100\npage_height_mm = 100\n"
        "label_width_mm = 150\nlabel_height_mm = 20\n",
        encoding="utf-8",
    )
    return path


@pytest.mark.parametrize(
    ("options", "field", "fragment"),
    [
        ({"stock": "a9-1"}, "stock", "no such stock"),
        ({"stock": "poster", "stocks": True}, "stock", "larger than its"),
        ({"stock": "a4-65", "start": 66}, "start", "past the sheet"),
        ({"stock": "cap-dot", "prefix": True}, "stock", "has no room"),
        ({"stock": "a4-65", "out": "missing-folder/x.pdf"}, "out", "folder does not exist"),
    ],
)
def test_bad_print_requests_are_refused_and_write_nothing(
    db: Database,
    counts: Counts,
    tmp_path: Path,
    options: dict[str, object],
    field: str,
    fragment: str,
) -> None:
    _lab(db)
    if options.get("prefix"):  # a long link: version 4 symbols do not fit a 15 mm dot
        handling.set_uri_prefix(db, "boss", {"uri_prefix": "HTTPS://" + "A" * 40 + ".EXAMPLE/T/"})
    before = counts()
    folder = tmp_path / "out"
    folder.mkdir()
    with pytest.raises(InputError) as caught:
        jobs.print_queue(
            db,
            "tech",
            stock=str(options["stock"]),
            start=int(str(options.get("start", 1))),
            out=folder / str(options.get("out", "labels.pdf")),
            stocks_file=_bad_stocks(tmp_path) if options.get("stocks") else None,
        )
    assert caught.value.field == field and fragment in caught.value.reason
    assert "\n" not in caught.value.one_line()
    assert counts() == before
    assert list(folder.iterdir()) == []  # not even a staged partial file
    assert len(handling.list_labels(db)) == 4  # still queued


def test_reprint_is_one_event_and_leaves_the_queue_alone(
    db: Database, counts: Counts, tmp_path: Path
) -> None:
    spec, powder, *_ = _lab(db)
    jobs.print_queue(db, "tech", stock="a4-65", out=tmp_path / "first.pdf")
    handling.queue_labels(db, "tech", {"items": [spec]})
    before = counts()
    out = tmp_path / "again.pdf"
    outcome = jobs.reprint(
        db, "tech", items=[powder, spec], reason="smudged by acid", stock="cryovial-wrap", out=out
    )
    after = counts()
    assert after["ledger_head"] == before["ledger_head"] + 1
    assert after["label"] == before["label"] + 2  # two printed labels on record
    event = _last_event(db)
    payload = json.loads(event.payload)
    assert event.action == "labels.reprinted"
    assert (payload["items"], payload["reason"], payload["kind"]) == (
        [powder, spec],
        "smudged by acid",
        "reprint",
    )
    assert payload["sha256"] == hashlib.sha256(out.read_bytes()).hexdigest()
    assert payload["pages"] == 2  # a roll stock: one label per page
    assert _decoded(out) == sorted([powder, spec])
    assert [r.item for r in handling.list_labels(db)] == [spec]  # the queued label is still there
    reprinted = [r for r in handling.list_labels(db, everything=True) if r.job == outcome.job.id]
    assert {r.queued_event for r in reprinted} == {event.seq}
    assert verify(db).ok


def test_a_reprint_needs_a_reason(db: Database, counts: Counts, tmp_path: Path) -> None:
    spec = _lab(db)[0]
    before = counts()
    folder = tmp_path / "out"
    folder.mkdir()
    with pytest.raises(InputError) as caught:
        jobs.reprint(db, "tech", items=[spec], reason="", stock="a4-65", out=folder / "r.pdf")
    assert caught.value.field == "reason"
    assert counts() == before and list(folder.iterdir()) == []


def test_preview_writes_a_png_and_records_nothing(
    db: Database, counts: Counts, tmp_path: Path
) -> None:
    items = _lab(db)
    before = counts()
    out = tmp_path / "sheet.png"
    outcome = jobs.preview(db, stock="a4-65", out=out, dpi=DPI)
    assert counts() == before
    assert outcome.items == items and outcome.pages == 1
    from PIL import Image

    found = sorted(d.text for d in decode(Image.open(out), DPI))  # zxing-cpp
    assert found == sorted(items)


def test_the_printer_gets_the_pdf_through_lp(
    db: Database, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """A stand-in `lp` on PATH records its arguments: tracker calls `lp -d NAME FILE`."""
    _lab(db)
    bin_dir = tmp_path / "bin"
    bin_dir.mkdir()
    calls = tmp_path / "lp-calls.txt"
    lp = bin_dir / "lp"
    lp.write_text(f'#!/bin/sh\necho "$@" > {calls}\necho "request id is bench-7 (1 file(s))"\n')
    lp.chmod(0o755)
    monkeypatch.setenv("PATH", f"{bin_dir}:/usr/bin:/bin")
    out = tmp_path / "sheet.pdf"
    outcome = jobs.print_queue(db, "tech", stock="a4-65", out=out, printer="bench-printer")
    assert calls.read_text().split() == ["-d", "bench-printer", str(out.resolve())]
    assert outcome.printer is not None and outcome.printer.sent
    assert "bench-7" in outcome.printer.message


def test_a_missing_lp_is_reported_but_the_job_is_recorded(
    db: Database, counts: Counts, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    _lab(db)
    monkeypatch.setenv("PATH", str(tmp_path))  # no lp here
    before = counts()
    outcome = jobs.print_queue(db, "tech", stock="a4-65", out=tmp_path / "s.pdf", printer="p1")
    assert counts()["ledger_head"] == before["ledger_head"] + 1
    assert outcome.printer is not None and not outcome.printer.sent
    assert "lp" in outcome.printer.message and "not installed" in outcome.printer.message
    assert json.loads(_last_event(db).payload)["printer"] == "p1"
