"""Writing a return report to disk: the rendered file, its ledger anchor and its photos.

Shared by the CLI (`tracker report return`) and the terminal interface. The order matters
for custody: every file is first written beside its target as a hidden partial, then the
report event is recorded, and only then are the partials renamed into place. A refused
record (wrong operator, closed database) therefore leaves no file a lender could mistake
for a recorded report.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass
from pathlib import Path

from tracker.db.database import Database
from tracker.domain.errors import InputError
from tracker.services import ledger, reports
from tracker.services.views import Done

FORMATS = ("pdf", "csv", "xlsx", "json")


@dataclass(frozen=True)
class WrittenReport:
    record: Done[reports.ReportRecord]
    target: Path
    anchor: Path
    photos: int
    photo_folder: Path | None

    @property
    def sha256(self) -> str:
        return next(iter(self.record.item.files.values()))


def default_name(loan_reference: str, fmt: str) -> str:
    """``KF-2026-014-return-report.pdf``: the reference with anything odd made a hyphen."""
    slug = "".join(c if c.isalnum() or c in "-_" else "-" for c in loan_reference)
    return f"{slug}-return-report.{fmt}"


def render(report: reports.ReturnReport, photos: dict[str, bytes], fmt: str) -> bytes:
    """The report in one format (the PDF embeds the photos; the tables list them)."""
    from tracker.output import report_tables, tabular

    if fmt == "json":
        return (report.model_dump_json(indent=2) + "\n").encode()
    if fmt == "pdf":
        from tracker.output.report_pdf import render_pdf

        return render_pdf(report, photos)
    rows = report_tables.rows(report)
    if fmt == "csv":
        return tabular.csv_bytes(report_tables.COLUMNS, rows)
    return tabular.xlsx_bytes(report_tables.COLUMNS, rows, "return report")


def anchor_bytes(db: Database, report: reports.ReturnReport) -> bytes:
    """The ledger head the report shows, checked against the ledger, as an anchor file for
    `tracker ledger verify --anchor` later."""
    label = f"return report {report.loan['reference']}"
    return ledger.anchor_for(db, report.ledger.seq, report.ledger.hash, label).to_text().encode()


def stage(path: Path, data: bytes, field: str = "out") -> Path:
    """Write ``data`` to a hidden file beside ``path``; the caller renames or removes it."""
    if not path.parent.is_dir():
        raise InputError(field, str(path), "its folder does not exist")
    staged = path.with_name(f".{path.name}.partial")
    staged.write_bytes(data)
    return staged


def write_atomically(path: Path, data: bytes, field: str = "out") -> str:
    """Write a file atomically (beside it, then renamed) and return its SHA-256."""
    stage(path, data, field).replace(path)
    return hashlib.sha256(data).hexdigest()


def write_return_report(
    db: Database, actor: str | None, loan: str, fmt: str, target: Path | None, folder: Path
) -> WrittenReport:
    """Build, render, record and write the report; ``target`` defaults to a name in ``folder``."""
    if fmt not in FORMATS:
        raise InputError("format", fmt, f"use one of {', '.join(FORMATS)}")
    report, photos = reports.attach_photos(db, reports.build_return_report(db, loan))
    target = target or folder / default_name(report.loan["reference"], fmt)
    data = render(report, photos, fmt)
    anchor = target.with_name(f"{target.name}.anchor.json")
    files = {target: data, anchor: anchor_bytes(db, report)}
    photo_folder = target.with_name(f"{target.stem}-attachments") if photos else None
    made = photo_folder is not None and not photo_folder.exists()
    if photo_folder is not None:
        if not target.parent.is_dir():
            raise InputError("out", str(target), "its folder does not exist")
        photo_folder.mkdir(exist_ok=True)
        files |= {photo_folder / digest: photo for digest, photo in photos.items()}
    staged: dict[Path, Path] = {}
    try:  # the event is recorded first: a refused record leaves no file behind
        for path, content in files.items():
            staged[path] = stage(path, content)
        record = reports.record_report(
            db,
            actor,
            {
                "loan": loan,
                "files": {fmt: hashlib.sha256(data).hexdigest()},
                "head_seq": report.ledger.seq,
                "head_hash": report.ledger.hash,
            },
        )
    except BaseException:
        for partial in staged.values():
            partial.unlink(missing_ok=True)
        if made and photo_folder is not None:
            photo_folder.rmdir()
        raise
    for path, partial in staged.items():
        partial.replace(path)
    return WrittenReport(record, target, anchor, len(photos), photo_folder)
