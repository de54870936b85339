"""Print jobs end to end: the stock, the layout, the PDF written safely, the record, the printer.

The order matters. The stock, the start position and the output file are checked before
the database is touched. The PDF is rendered inside the print service's transaction (so
the labels in it are exactly those marked printed) and staged beside its destination; only
when the job is committed is it published (:mod:`tracker.db.outputs`: never over the
database, never over an existing file unless forced). A refusal anywhere leaves neither a
record nor a file. Without a name, the PDF is named after its job and ledger event.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from pydantic import BaseModel, ConfigDict

from tracker.db import outputs
from tracker.db.database import Database
from tracker.domain.errors import InputError
from tracker.domain.labels import MAX_PREVIEW_PIXELS, PrintBatch, Rendered
from tracker.output.layout import lay_out
from tracker.output.pdf import render_pdf
from tracker.output.png import page_pixels, render_png
from tracker.output.printer import PrinterReport, send
from tracker.output.stocks import Stock, check_start, load_stock
from tracker.services.core.views import Done
from tracker.services.labels import handling, printing
from tracker.services.labels.printing import JobView

MIN_DPI, MAX_DPI = 72, 1200


class PrintOutcome(BaseModel):
    model_config = ConfigDict(frozen=True)

    job: JobView
    event_seq: int
    event_hash: str
    out: str
    printer: PrinterReport | None
    replaced_kept_as: str | None = None


class PreviewOutcome(BaseModel):
    model_config = ConfigDict(frozen=True)

    out: str
    stock: str
    page: int
    pages: int
    items: list[str]  # the labels on the previewed page, in order
    replaced_kept_as: str | None = None


def print_queue(
    db: Database,
    actor: str | None,
    *,
    stock: str,
    start: int = 1,
    out: Path | None = None,
    printer: str | None = None,
    stocks_file: Path | None = None,
    folder: Path | None = None,
    force: bool = False,
    items: list[str] | None = None,
) -> PrintOutcome:
    """Every queued label (or only the named ``items``' labels) to a PDF, recorded as one
    print job.

    Without ``out`` the PDF is named after its job and event, in ``folder`` (default: the
    current one); an existing ``out`` is replaced only with ``force`` (and kept beside it).
    """
    request = {"stock": stock, "start": start, "printer": printer, "items": items}
    target = Target(out, folder, force)
    return _run(db, actor, printing.print_queue, request, target, stocks_file)


def reprint(
    db: Database,
    actor: str | None,
    *,
    items: list[str],
    reason: str,
    stock: str,
    start: int = 1,
    out: Path | None = None,
    printer: str | None = None,
    stocks_file: Path | None = None,
    folder: Path | None = None,
    force: bool = False,
) -> PrintOutcome:
    """Named items' labels again, with the reason, recorded as one reprint job; named and
    placed as :func:`print_queue` names and places its PDF."""
    request = {"items": items, "reason": reason, "stock": stock, "start": start, "printer": printer}
    return _run(db, actor, printing.reprint, request, Target(out, folder, force), stocks_file)


Service = Callable[..., Done[JobView]]


@dataclass(frozen=True)
class Target:
    """Where a job's PDF goes: a named file, or a new name in a folder (default: here)."""

    out: Path | None
    folder: Path | None
    force: bool

    def check(self, db: Database) -> Path:
        """Refuse a target that may not be written before anything is recorded; the folder."""
        if self.out is not None:
            outputs.check_target(self.out, "out", force=self.force, database=db.path)
            return self.out.parent
        folder = self.folder or Path.cwd()
        if not folder.is_dir():
            raise InputError("out", str(folder), "the output folder does not exist")
        return folder


def _run(
    db: Database,
    actor: str | None,
    service: Service,
    request: dict[str, Any],
    target: Target,
    stocks_file: Path | None,
) -> PrintOutcome:
    chosen = _stock(request["stock"], request["start"], stocks_file)
    folder = target.check(db)
    staged: list[outputs.Staged] = []

    def render(batch: PrintBatch) -> Rendered:
        pages = lay_out(chosen, batch.labels, request["start"])
        content = render_pdf(chosen, pages, f"tracker labels, print job {batch.job}")
        staged.append(outputs.stage(folder, f"labels-{batch.job}.pdf", content, "out"))
        return Rendered(content=content, pages=len(pages))

    try:
        done = service(db, actor, request, render)
        first = target.out or folder / f"labels-{done.item.id}-event-{done.event_seq}.pdf"
        (path,), (kept,) = outputs.publish_first_free(
            staged[-1:],
            ([name] for name in outputs.variants(first)),
            "out",
            force=target.force,
            database=db.path,
            clock=db.clock,
        )
    finally:
        outputs.discard(*staged)
    printer = request["printer"]
    return PrintOutcome(
        job=done.item,
        event_seq=done.event_seq,
        event_hash=done.event_hash,
        out=str(path),
        printer=send(path, printer) if printer else None,
        replaced_kept_as=None if kept is None else str(kept),
    )


def preview(
    db: Database,
    *,
    stock: str,
    out: Path,
    items: list[str] | None = None,
    start: int = 1,
    page: int = 1,
    dpi: int = 300,
    stocks_file: Path | None = None,
    force: bool = False,
) -> PreviewOutcome:
    """One sheet of the queue (or of the named items) as a PNG; nothing is recorded."""
    chosen = _stock(stock, start, stocks_file)
    if not MIN_DPI <= dpi <= MAX_DPI:
        raise InputError("dpi", dpi, f"must be between {MIN_DPI} and {MAX_DPI}")
    _check_pixels(chosen, dpi)
    outputs.check_target(out, "out", force=force, database=db.path)
    facts = handling.facts_for(db, items) if items else handling.queued_facts(db)
    if not facts:
        raise InputError("items", None, "no labels are queued; name the IDs to preview")
    pages = lay_out(chosen, facts, start)
    if not 1 <= page <= len(pages):
        raise InputError("page", page, f"there are {len(pages)} page(s) of labels")
    shown = pages[page - 1]
    png = render_png(chosen, shown, dpi)
    written = outputs.write_new(out, png, "out", force=force, database=db.path, clock=db.clock)
    return PreviewOutcome(
        out=str(out),
        stock=chosen.name,
        page=page,
        pages=len(pages),
        items=[label.facts.item for label in shown.labels],
        replaced_kept_as=None if written.replaced is None else str(written.replaced),
    )


def _check_pixels(stock: Stock, dpi: int) -> None:
    """Refuse, before drawing, a preview larger than MAX_PREVIEW_PIXELS; say the dpi that fits."""
    if _area(stock, dpi) <= MAX_PREVIEW_PIXELS:
        return
    width, height = page_pixels(stock, dpi)
    fitting = (d for d in range(dpi - 1, MIN_DPI - 1, -1) if _area(stock, d) <= MAX_PREVIEW_PIXELS)
    fits = next(fitting, None)
    advice = f"ask {fits} dpi or less" if fits else "this stock's page is too large to preview"
    raise InputError(
        "dpi",
        dpi,
        f"the {stock.page_width_mm:g} × {stock.page_height_mm:g} mm page of {stock.name} would "
        f"be {width:,} × {height:,} = {width * height:,} pixels; previews are capped at "
        f"{MAX_PREVIEW_PIXELS:,} pixels: {advice}",
    )


def _area(stock: Stock, dpi: int) -> int:
    width, height = page_pixels(stock, dpi)
    return width * height


def _stock(name: str, start: int, stocks_file: Path | None) -> Stock:
    chosen = load_stock(name, stocks_file)
    check_start(chosen, start)
    return chosen
