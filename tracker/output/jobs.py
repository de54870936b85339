"""Print jobs end to end: the stock, the layout, the PDF written safely, the record, the printer.

The order matters. The stock and the start position are checked before the
database is touched. The PDF is rendered inside the print service's
transaction (so the labels in it are exactly those marked printed) and staged
beside its destination; only when the job is committed is it renamed into
place. A refusal anywhere leaves neither a record nor a file.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import Any

from pydantic import BaseModel, ConfigDict

from tracker.db.database import Database
from tracker.domain.errors import InputError
from tracker.domain.labels import MAX_PREVIEW_PIXELS, PrintBatch, Rendered
from tracker.output.layout import lay_out
from tracker.output.pdf import render_pdf
from tracker.output.png import page_pixels, render_png
from tracker.output.printer import PrinterReport, send
from tracker.output.stocks import Stock, check_start, load_stock
from tracker.services import label_jobs, labels
from tracker.services.label_jobs import JobView
from tracker.services.views import Done

MIN_DPI, MAX_DPI = 72, 1200


class PrintOutcome(BaseModel):
    model_config = ConfigDict(frozen=True)

    job: JobView
    event_seq: int
    event_hash: str
    out: str
    printer: PrinterReport | None


class PreviewOutcome(BaseModel):
    model_config = ConfigDict(frozen=True)

    out: str
    stock: str
    page: int
    pages: int
    items: list[str]  # the labels on the previewed page, in order


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
) -> PrintOutcome:
    """Every queued label to a PDF, recorded as one print job.

    Without ``out`` the PDF is named after its job, in ``folder`` (default: the current one).
    """
    request = {"stock": stock, "start": start, "printer": printer}
    return _run(db, actor, label_jobs.print_queue, request, out, stocks_file, folder)


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
) -> PrintOutcome:
    """Named items' labels again, with the reason, recorded as one reprint job."""
    request = {"items": items, "reason": reason, "stock": stock, "start": start, "printer": printer}
    return _run(db, actor, label_jobs.reprint, request, out, stocks_file)


Service = Callable[..., Done[JobView]]


def _run(
    db: Database,
    actor: str | None,
    service: Service,
    request: dict[str, Any],
    out: Path | None,
    stocks_file: Path | None,
    folder: Path | None = None,
) -> PrintOutcome:
    chosen = _stock(request["stock"], request["start"], stocks_file)
    folder = _folder(out if out is not None or folder is None else folder / "labels.pdf")
    staged: list[tuple[Path, Path]] = []

    def render(batch: PrintBatch) -> Rendered:
        pages = lay_out(chosen, batch.labels, request["start"])
        content = render_pdf(chosen, pages, f"tracker labels, print job {batch.job}")
        target = out if out is not None else folder / f"labels-{batch.job}.pdf"
        staged.append((_stage(target, content), target))
        return Rendered(content=content, pages=len(pages))

    try:
        done = service(db, actor, request, render)
    except BaseException:
        for partial, _ in staged:
            partial.unlink(missing_ok=True)
        raise
    partial, target = staged[-1]
    partial.replace(target)
    printer = request["printer"]
    return PrintOutcome(
        job=done.item,
        event_seq=done.event_seq,
        event_hash=done.event_hash,
        out=str(target),
        printer=send(target, printer) if printer else None,
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
) -> PreviewOutcome:
    """One sheet of the queue (or of the named items) as a PNG; nothing is recorded."""
    chosen = _stock(stock, start, stocks_file)
    if not MIN_DPI <= dpi <= MAX_DPI:
        raise InputError("dpi", dpi, f"must be between {MIN_DPI} and {MAX_DPI}")
    _check_pixels(chosen, dpi)
    _folder(out)
    facts = labels.facts_for(db, items) if items else labels.queued_facts(db)
    if not facts:
        raise InputError("items", None, "no labels are queued; name the IDs to preview")
    pages = lay_out(chosen, facts, start)
    if not 1 <= page <= len(pages):
        raise InputError("page", page, f"there are {len(pages)} page(s) of labels")
    shown = pages[page - 1]
    _stage(out, render_png(chosen, shown, dpi)).replace(out)
    ids = [label.facts.item for label in shown.labels]
    return PreviewOutcome(out=str(out), stock=chosen.name, page=page, pages=len(pages), items=ids)


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


def _folder(out: Path | None) -> Path:
    folder = Path.cwd() if out is None else out.parent
    if not folder.is_dir():
        raise InputError("out", str(out), "its folder does not exist")
    if out is not None and out.is_dir():
        raise InputError("out", str(out), "is a folder; give a file name")
    return folder


def _stage(target: Path, content: bytes) -> Path:
    """Write ``content`` to a hidden file beside ``target``; the caller renames it into place."""
    handle, name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".partial", dir=target.parent)
    with os.fdopen(handle, "wb") as stream:
        stream.write(content)
    mask = os.umask(0)  # mkstemp makes the file private; give it the usual mode for new files
    os.umask(mask)
    Path(name).chmod(0o666 & ~mask)
    return Path(name)
