"""Writing a return report to disk: the rendered file, its ledger anchor and its photos.

Shared by the CLI (`tracker report return`) and the terminal interface. The order matters
for custody: every file is first written whole beside its target under a hidden name, then
the report event is recorded, and only then are the files published under their names
(:mod:`tracker.db.outputs`: never over the database, never over an existing file unless
forced). A refused record (wrong operator, closed database) therefore leaves no file a
lender could mistake for a recorded report, and a refused target records nothing.

Without a name, the report is named after the loan and the number of its report event,
so two reports of the same loan never share a name.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path

from tracker.db import outputs
from tracker.db.database import Database
from tracker.domain.errors import InputError
from tracker.services.core.views import Done
from tracker.services.ledger import chain
from tracker.services.read import reports
from tracker.services.read.report_views import ReturnReport

FORMATS = ("pdf", "csv", "xlsx", "json")


@dataclass(frozen=True)
class WrittenReport:
    record: Done[reports.ReportRecord]
    target: Path
    anchor: Path
    photos: int
    photo_folder: Path | None
    replaced: list[Path]  # files --force moved aside, each kept as <name>.replaced-<time>

    @property
    def sha256(self) -> str:
        return next(iter(self.record.item.files.values()))


def default_name(loan_reference: str, fmt: str, event_seq: int) -> str:
    """``KF-2026-014-return-report-event-57.pdf``: the reference with anything odd made a
    hyphen, and the report event's number, so that no two reports share a name."""
    slug = "".join(c if c.isalnum() or c in "-_" else "-" for c in loan_reference)
    return f"{slug}-return-report-event-{event_seq}.{fmt}"


def anchor_path(target: Path) -> Path:
    return target.with_name(f"{target.name}.anchor.json")


def photo_folder(target: Path) -> Path:
    return target.with_name(f"{target.stem}-attachments")


def render(report: ReturnReport, photos: dict[str, bytes], fmt: str) -> bytes:
    """The report in one format (the PDF embeds the photos; the tables list them)."""
    from tracker.output import report_tables, tabular

    if fmt == "json":
        return (report.model_dump_json(indent=2) + "\n").encode()
    if fmt == "pdf":
        from tracker.output.report_pdf import render_pdf

        return render_pdf(report, photos)
    rows = report_tables.rows(report)
    columns = report_tables.columns(report)
    if fmt == "csv":
        return tabular.csv_bytes(columns, rows)
    return tabular.xlsx_bytes(columns, rows, "return report")


def anchor_bytes(db: Database, actor: str | None, report: ReturnReport) -> bytes:
    """The ledger head the report shows, checked against the ledger and signed by ``actor``
    (a manager), as an anchor file for `tracker ledger verify --anchor` later."""
    label = f"return report {report.loan['reference']}"
    anchor = chain.anchor_for(db, actor, report.ledger.seq, report.ledger.hash, label)
    return anchor.to_text().encode()


def write_return_report(
    db: Database,
    actor: str | None,
    loan: str,
    fmt: str,
    target: Path | None,
    folder: Path,
    *,
    force: bool = False,
    despite_discrepancies: bool = False,
) -> WrittenReport:
    """Build, render, record and write the report; without ``target``, a new name in ``folder``.

    An existing ``target`` (or its anchor or a photo of another content) is refused before
    anything is recorded, unless ``force``: then each is kept as ``<name>.replaced-<time>``.
    A loan whose books differ from the ledger is refused unless ``despite_discrepancies``:
    the report then lists every discrepancy first, and its event records how many.
    """
    if fmt not in FORMATS:
        raise InputError("format", fmt, f"use one of {', '.join(FORMATS)}")
    if target is not None:
        outputs.check_target(target, "out", force=force, database=db.path)
        folder = target.parent
    elif not folder.is_dir():
        raise InputError("out", str(folder), "the output folder does not exist")
    built = reports.build_return_report(db, loan, despite_discrepancies=despite_discrepancies)
    report, photos = reports.attach_photos(db, built)
    data = render(report, photos, fmt)
    if target is not None:
        _check_companions(db, target, photos, force)
    anchor = anchor_bytes(db, actor, report)  # a manager's signature, before any file
    staged: list[outputs.Staged] = []
    try:
        staged.append(
            outputs.stage(folder, target.name if target else f"report.{fmt}", data, "out")
        )
        staged.append(outputs.stage(folder, "report.anchor.json", anchor, "out"))
        for digest, photo in photos.items():
            staged.append(outputs.stage(folder, digest, photo, "out", reuse=True))
        record = reports.record_report(  # recorded first: a refused record leaves no file
            db,
            actor,
            {
                "loan": loan,
                "files": {fmt: staged[0].sha256},
                "head_seq": report.ledger.seq,
                "head_hash": report.ledger.hash,
                "despite_discrepancies": len(report.discrepancies),
            },
        )
        first = target or folder / default_name(report.loan["reference"], fmt, record.event_seq)
        names, kept = outputs.publish_first_free(
            staged,
            _names(first, list(photos)),
            "out",
            force=force,
            database=db.path,
            clock=db.clock,
        )
    finally:
        outputs.discard(*staged)
    return WrittenReport(
        record,
        names[0],
        names[1],
        len(photos),
        photo_folder(names[0]) if photos else None,
        [path for path in kept if path is not None],
    )


def _names(first: Path, digests: Sequence[str]) -> Iterator[list[Path]]:
    """The report's name, its anchor's and its photos', for each free-name variant."""
    for target in outputs.variants(first):
        folder = photo_folder(target)
        yield [target, anchor_path(target), *(folder / digest for digest in digests)]


def _check_companions(db: Database, target: Path, photos: dict[str, bytes], force: bool) -> None:
    """The anchor and the photos go beside the report: the same rules, checked up front."""
    outputs.check_target(anchor_path(target), "out", force=force, database=db.path)
    folder = photo_folder(target)
    if photos and (folder.exists() or folder.is_symlink()) and not folder.is_dir():
        raise InputError("out", str(folder), "is not a folder; the report's photos go there")
    if not folder.is_dir():
        return
    for digest in photos:
        if not outputs.holds(folder / digest, digest):  # the same photo already there is fine
            outputs.check_target(folder / digest, "out", force=force, database=db.path)
