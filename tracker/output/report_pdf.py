"""The return report as a PDF laid out for people: paginated, headed, nothing overflowing.

reportlab's platypus flows the content over A4 pages: tables repeat their header row
and wrap their cells, photos are scaled to thumbnails, and every page carries the loan,
the page number and the ledger head the report was made from. The text face is DejaVu
Sans (shipped inside matplotlib), which has δ, ‰, ± and µ.
"""

from __future__ import annotations

import importlib.util
import io
import warnings
from functools import cache
from pathlib import Path
from typing import Any

from PIL import Image as Pillow
from reportlab.lib import colors
from reportlab.lib.pagesizes import A4
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.pdfmetrics import registerFontFamily
from reportlab.pdfbase.ttfonts import TTFont
from reportlab.pdfgen import canvas as pdfcanvas
from reportlab.platypus import (
    Flowable,
    Image,
    KeepTogether,
    Paragraph,
    SimpleDocTemplate,
    Spacer,
    Table,
    TableStyle,
)
from reportlab.platypus.tables import CellStyle

from tracker.domain import precision
from tracker.services.read.report_views import PowderLine, ReturnReport, SpecimenEntry

FACE, BOLD = "TrackerReport", "TrackerReport-Bold"
MARGIN = 18 * mm
WIDTH = A4[0] - 2 * MARGIN
THUMB = 38 * mm
THUMB_PIXELS = 600  # 38 mm at 400 dpi: sharp in print


@cache
def _fonts() -> None:
    folder = _matplotlib_data() / "fonts" / "ttf"
    pdfmetrics.registerFont(TTFont(FACE, str(folder / "DejaVuSans.ttf")))
    pdfmetrics.registerFont(TTFont(BOLD, str(folder / "DejaVuSans-Bold.ttf")))
    registerFontFamily(FACE, normal=FACE, bold=BOLD, italic=FACE, boldItalic=BOLD)


def _matplotlib_data() -> Path:
    """matplotlib's data folder, found without importing matplotlib (a fifth of a second a
    report does not need): the folder ``matplotlib.get_data_path()`` names, beside its code."""
    spec = importlib.util.find_spec("matplotlib")
    if spec is None or spec.origin is None:
        raise RuntimeError("matplotlib, which holds the report's font, is not installed")
    return Path(spec.origin).with_name("mpl-data")


def _styles() -> dict[str, ParagraphStyle]:
    _fonts()
    body = ParagraphStyle("body", fontName=FACE, fontSize=8.5, leading=11)
    return {
        "body": body,
        "small": ParagraphStyle("small", parent=body, fontSize=7.5, leading=9.5),
        "title": ParagraphStyle("title", parent=body, fontName=BOLD, fontSize=16, leading=20),
        "h2": ParagraphStyle(
            "h2", parent=body, fontName=BOLD, fontSize=11, leading=14, spaceBefore=8, spaceAfter=4
        ),
        "h3": ParagraphStyle(
            "h3", parent=body, fontName=BOLD, fontSize=9, leading=12, spaceBefore=6, spaceAfter=2
        ),
    }


def _shown(value: object) -> str:
    """A value as the report prints it: a dash for nothing."""
    return "—" if value is None or value == "" else str(value)


def _esc(value: object) -> str:
    return _shown(value).replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")


def _table(
    rows: list[list[Any]],
    widths: list[float],
    styles: dict[str, ParagraphStyle],
    header: bool = True,
) -> Table:
    """A table whose every cell wraps (no overflow) and whose header repeats on new pages."""
    columns = [w * WIDTH for w in widths]
    cells = [
        [_cell(c, width, styles) for c, width in zip(row, columns, strict=True)] for row in rows
    ]
    table = Table(cells, colWidths=columns, repeatRows=1 if header else 0)
    small = styles["small"]
    commands: list[Any] = [
        ("FONT", (0, 0), (-1, -1), small.fontName, small.fontSize, small.leading),
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("GRID", (0, 0), (-1, -1), 0.25, colors.grey),
    ]
    if header:
        commands.append(("BACKGROUND", (0, 0), (-1, 0), colors.Color(0.9, 0.9, 0.9)))
    table.setStyle(TableStyle(commands))
    return table


# points a table cell keeps free beside its text: reportlab's default left and right padding
CELL_PADDING = CellStyle("cell").leftPadding + CellStyle("cell").rightPadding


def _cell(value: object, width: float, styles: dict[str, ParagraphStyle]) -> Flowable | str:
    """A cell's content: text that fits its column on one line is drawn as it is (in the
    table's font); longer text becomes a paragraph that wraps. Laying out a paragraph costs
    a report of a hundred specimens most of its time, and few cells need one."""
    if isinstance(value, Flowable):
        return value
    text = _shown(value)
    small = styles["small"]
    fits = pdfmetrics.stringWidth(text, small.fontName, small.fontSize) <= width - CELL_PADDING
    if fits and "\n" not in text:
        return text
    return Paragraph(_esc(text), small)


def render_pdf(report: ReturnReport, photos: dict[str, bytes]) -> bytes:
    """The report as PDF bytes."""
    styles = _styles()
    buffer = io.BytesIO()
    loan = report.loan
    doc = SimpleDocTemplate(
        buffer,
        pagesize=A4,
        leftMargin=MARGIN,
        rightMargin=MARGIN,
        topMargin=MARGIN + 6 * mm,
        bottomMargin=MARGIN,
        title=f"Return report {loan['reference']}",
        author="tracker",
        subject=report.format,
    )
    header = f"Return report · {loan['reference']} · {report.lender['name']}"
    footer = f"ledger head #{report.ledger.seq} {report.ledger.hash[:16]}…"
    story = [*_front(report, styles), *_discrepancies(report, styles)]
    story += [*_terms(report, styles), *_totals(report, styles)]
    story += _backdated(report, styles)
    story += [Paragraph("Specimens", styles["h2"])]
    for entry in report.specimens:
        story += _specimen(entry, photos, styles)
    story += [*_timeline(report, styles), *_ledger(report, styles), *_signatures(styles)]
    doc.build(story, canvasmaker=_numbered(header, footer))
    return buffer.getvalue()


def _numbered(header: str, footer: str) -> type[pdfcanvas.Canvas]:
    """A canvas that writes "page N of M" once it knows M (two passes over saved pages)."""

    class Numbered(pdfcanvas.Canvas):  # type: ignore[misc]
        def __init__(self, *args: Any, **kwargs: Any) -> None:
            super().__init__(*args, **kwargs)
            self._pages: list[dict[str, Any]] = []

        def showPage(self) -> None:  # noqa: N802 - reportlab's name
            self._pages.append(dict(self.__dict__))
            self._startPage()

        def save(self) -> None:
            for state in self._pages:
                self.__dict__.update(state)
                self._decorate(len(self._pages))
                super().showPage()
            super().save()

        def _decorate(self, total: int) -> None:
            self.setFont(FACE, 7.5)
            self.setFillColor(colors.grey)
            self.drawString(MARGIN, A4[1] - MARGIN, header)
            self.drawString(MARGIN, MARGIN - 8 * mm, footer)
            self.drawRightString(
                A4[0] - MARGIN, MARGIN - 8 * mm, f"page {self._pageNumber} of {total}"
            )

    return Numbered


def _front(report: ReturnReport, styles: dict[str, ParagraphStyle]) -> list[Flowable]:
    loan, lender = report.loan, report.lender
    rows = [
        ["Lender", f"{lender['name']} ({lender['institution_code'] or '—'})"],
        ["Lender contact", f"{lender['contact'] or '—'} {lender['email'] or ''}"],
        ["Loan", f"{loan['reference']} — {loan['title']} (tracker ID {loan['id']})"],
        ["Borrower", loan["borrower"]],
        [
            "Received / due / returned",
            f"{_esc(loan['received_on'])} / {_esc(loan['due_on'])} / {_esc(loan['returned_on'])}",
        ],
        ["Status", loan["status"]],
        ["Report generated", report.generated_at.strftime("%Y-%m-%d %H:%M UTC")],
    ]
    return [
        Paragraph(f"Return report — {_esc(loan['reference'])}", styles["title"]),
        Spacer(1, 4 * mm),
        _table(rows, [0.28, 0.72], styles, header=False),
    ]


def _discrepancies(report: ReturnReport, styles: dict[str, ParagraphStyle]) -> list[Flowable]:
    """On the first page: a report written despite the books differing from the ledger
    lists every difference, before anything it says."""
    found = report.discrepancies
    if not found:
        return []
    note = (
        f"<b>The books of this loan differ from its custody ledger in {len(found)} place(s).</b> "
        "This report was written despite them: the values below are the stored ones, which "
        f"no ledger event accounts for. Check them with <b>{_esc(report.ledger.audit_command)}"
        "</b>."
    )
    rows = [["Discrepancy"]] + [[d.said] for d in found]
    return [
        Paragraph("Books differ from the ledger", styles["h2"]),
        Paragraph(note, styles["body"]),
        _table(rows, [1.0], styles),
    ]


def _terms(report: ReturnReport, styles: dict[str, ParagraphStyle]) -> list[Flowable]:
    t = report.terms_in_force
    rows = [
        ["Permitted tissues", ", ".join(t.permitted_tissues)],
        ["Mass per specimen", precision.limit_mg(t.max_mass_per_specimen_mg)],
        ["Total mass", precision.limit_mg(t.max_total_mass_mg)],
        ["Specimens that may be sampled", _esc(t.max_specimens_sampled)],
        [
            "Unused powder / residual solutions",
            f"{t.powder_disposition} / {t.solution_disposition}",
        ],
        [
            "Report data / acknowledgement",
            f"{'yes' if t.report_data else 'no'} / {'yes' if t.acknowledgement else 'no'}",
        ],
    ]
    flow: list[Flowable] = [
        Paragraph(f"Terms in force (version {t.version})", styles["h2"]),
        _table(rows, [0.38, 0.62], styles, header=False),
    ]
    if report.amendments:
        docs = {d.sha256: d for d in report.documents}
        amend = [["Version", "Kind", "Effective", "Reason", "Due"]] + [
            [a.version, a.kind, a.effective_from, a.notes, a.due_on] for a in report.amendments
        ]
        flow += [
            Paragraph("Amendments", styles["h3"]),
            _table(amend, [0.1, 0.14, 0.16, 0.44, 0.16], styles),
        ]
        if docs:
            flow += [
                Paragraph(
                    "Documents kept (SHA-256): "
                    + "; ".join(f"{_esc(d.filename)} {d.sha256}" for d in docs.values()),
                    styles["small"],
                )
            ]
    return flow


def _left(report: ReturnReport, fate: str) -> str:
    return precision.milligrams(report.powder_left_mg(fate))


def _totals(report: ReturnReport, styles: dict[str, ParagraphStyle]) -> list[Flowable]:
    t = report.totals
    drilled = precision.milligrams(t.drilled_mg, t.drilled_u_mg)
    rows = [
        ["Specimens listed / sampled", f"{t.specimens} / {t.sampled}"],
        ["Mass removed (all specimens)", f"{drilled} of {precision.limit_mg(t.max_total_mass_mg)}"],
        ["Powder dissolved", precision.milligrams(t.dissolved_mg)],
        ["Powder returned", precision.milligrams(t.powder_returned_mg)],
        *[
            [f"Powder {label}", precision.milligrams(report.powder_left_mg(fate))]
            for fate, label in _FATES
        ],
        ["Powder still held by the borrower", precision.milligrams(t.powder_on_hand_mg)],
        ["Flags", ", ".join(report.flags) or "none"],
    ]
    return [Paragraph("Totals", styles["h2"]), _table(rows, [0.38, 0.62], styles, header=False)]


def _backdated(report: ReturnReport, styles: dict[str, ParagraphStyle]) -> list[Flowable]:
    """Entries dated further back than the lab's window: when each says it happened, and
    when it was recorded (and by which manager)."""
    if not report.backdated:
        return []
    rows: list[list[Any]] = [["Item", "Time stated", "Dated", "Recorded", "By", "Event"]]
    rows += [
        [
            b.item,
            b.field.replace("_", " "),
            f"{b.stated_at:%Y-%m-%d %H:%M} UTC",
            f"{b.recorded_at:%Y-%m-%d %H:%M} UTC",
            b.recorded_by,
            f"#{b.event_seq}",
        ]
        for b in report.backdated
    ]
    note = (
        "These entries were dated further back than the laboratory's backdating window "
        "allows without a manager; a manager recorded each, and both times are kept."
    )
    return [
        Paragraph("Entries dated back", styles["h2"]),
        Paragraph(note, styles["small"]),
        Spacer(1, 1.5 * mm),
        _table(rows, [0.2, 0.14, 0.2, 0.2, 0.12, 0.14], styles),
    ]


_FATES = (
    ("destroyed", "destroyed"),
    ("retained", "retained (with permission)"),
    ("consumed", "used up (vial empty)"),
)


def _specimen(
    entry: SpecimenEntry, photos: dict[str, bytes], styles: dict[str, ParagraphStyle]
) -> list[Flowable]:
    title = Paragraph(
        f"{_esc(entry.catalog_number)} — {_esc(entry.scientific_name)} "
        f"({_esc(entry.skeletal_element)}) · {entry.id}",
        styles["h3"],
    )
    drilled = precision.milligrams(entry.drilled_mg, entry.drilled_u_mg)
    removed = f"{drilled} / {precision.limit_mg(entry.permitted_mg)}"
    if "over limit" in entry.flags:
        removed += " — OVER the permitted mass (see overrides below)"
    rows: list[list[Any]] = [
        ["Sampled", "yes" if entry.sampled else "no"],
        ["Mass removed / permitted", removed],
        ["Condition at receipt", entry.condition_in],
        ["Condition at return", entry.condition_out],
        ["Returned", _returned(entry)],
        ["Flags", ", ".join(entry.flags) or "none"],
    ]
    flow: list[Flowable] = [title, _table(rows, [0.3, 0.7], styles, header=False)]
    if entry.powders:
        header = ["Powder", "Site", "Drilled", "Mass", "Dissolved", "Left", "Fate"]
        powder_rows: list[list[Any]] = [header, *(_powder_row(p) for p in entry.powders)]
        widths = [0.13, 0.17, 0.13, 0.16, 0.11, 0.1, 0.2]
        flow += [Spacer(1, 2 * mm), _table(powder_rows, widths, styles)]
    flow += [
        Paragraph(f"<b>Override</b> on {p.id}: {_esc(p.override_reason)}", styles["small"])
        for p in entry.powders
        if p.override_reason
    ]
    if entry.solutions:
        flow += [
            Spacer(1, 1.5 * mm),
            Paragraph(
                "Residual solutions: "
                + "; ".join(
                    f"{x.id} {x.status}"
                    + (f" ({precision.grams(x.residual_g)})" if x.residual_g else "")
                    for x in entry.solutions
                ),
                styles["small"],
            ),
        ]
    if entry.results:
        result_rows: list[list[Any]] = [["Ratio", "Value", "2SD", "n", "Scale", "Session", "Flags"]]
        result_rows += [
            [
                r.ratio,
                *_result_cells(r.kind, r.value, r.two_sd, r.uncertainty),
                r.n,
                r.scale,
                r.session,
                ", ".join(r.flags),
            ]
            for r in entry.results
        ]
        flow += [
            Spacer(1, 2 * mm),
            _table(result_rows, [0.1, 0.14, 0.12, 0.05, 0.16, 0.15, 0.28], styles),
        ]
        if any(r.uncertainty == "long-term" for r in entry.results):
            flow.append(Paragraph(precision.LONG_TERM_NOTE, styles["small"]))
    flow += _thumbnails(entry, photos, styles)
    return [KeepTogether(flow[:2]), *flow[2:], Spacer(1, 3 * mm)]


def _returned(entry: SpecimenEntry) -> str:
    if entry.returned_at is None:
        return "not yet returned"
    parcel = f" in shipment {entry.return_shipment}" if entry.return_shipment else ""
    return f"{entry.returned_at:%Y-%m-%d}{parcel}"


def _powder_row(p: PowderLine) -> list[Any]:
    return [
        p.id,
        p.site,
        p.drilled_at.date(),
        precision.milligrams(p.mass_mg, p.mass_u_mg),
        precision.milligrams(p.dissolved_mg),
        precision.milligrams(p.left_mg),
        _fate(p.status, p.shipment, p.permission, p.override_reason),
    ]


def _fate(status: str, shipment: str | None, permission: str | None, override: str | None) -> str:
    text = status + (f" in {shipment}" if shipment else "")
    text += f"; permission: {permission}" if permission else ""
    return text + ("; drilled under an override" if override else "")


def _result_cells(kind: str, value: float, two_sd: float | None, basis: str) -> list[str]:
    """A result's value and 2SD at the place the 2SD decides (``domain/precision.py``)."""
    shown, spread = precision.result_pair(kind, value, two_sd)
    unit = " ‰" if kind == "delta" else ""
    return [
        f"δ {shown}{unit}" if kind == "delta" else shown,
        precision.reported_spread(spread, unit, basis),
    ]


def _thumbnails(
    entry: SpecimenEntry, photos: dict[str, bytes], styles: dict[str, ParagraphStyle]
) -> list[Flowable]:
    cells = []
    for photo in entry.photos:
        data = photos.get(photo.sha256)
        if data is None:
            continue
        small = thumbnail(data)
        if small is None:  # a stored file that no longer reads as an image: say so, go on
            cells.append(
                [
                    Paragraph("(image could not be read)", styles["small"]),
                    Paragraph(photo.sha256[:16], styles["small"]),
                ]
            )
            continue
        jpeg, (width, height) = small
        scale = THUMB / max(width, height)
        image = Image(io.BytesIO(jpeg), width=width * scale, height=height * scale)
        caption = Paragraph(
            f"{photo.stage}: {_esc(photo.caption)}<br/>{photo.sha256[:16]}…", styles["small"]
        )
        cells.append([image, caption])
    if not cells:
        return []
    per_row = 2  # a thumbnail and a readable caption in each half of the page
    rows = [
        [c for pair in cells[i : i + per_row] for c in pair] for i in range(0, len(cells), per_row)
    ]
    widths = [THUMB + 2 * mm, WIDTH / per_row - THUMB - 2 * mm] * min(per_row, len(cells))
    heading = Paragraph(f"Photographs of {_esc(entry.catalog_number)}", styles["small"])
    return [
        KeepTogether([Spacer(1, 1.5 * mm), heading, Table(rows, colWidths=widths, hAlign="LEFT")])
    ]


def thumbnail(data: bytes) -> tuple[bytes, tuple[int, int]] | None:
    """The photograph as a small image for the page (and its size in pixels), or None if
    it cannot be read.

    The page shows it THUMB wide, so THUMB_PIXELS a side is all it needs. A JPEG is
    decoded straight at 1/2, 1/4 or 1/8 of its size (Pillow's draft), so a large photo
    is never held at full size; other formats are decoded once and reduced. Photographs
    are capped when kept (domain/photos.py); one kept before the cap, beyond Pillow's
    own limit, is reported unreadable rather than decoded.
    """
    box = (THUMB_PIXELS, THUMB_PIXELS)
    try:
        with (
            warnings.catch_warnings(action="ignore", category=Pillow.DecompressionBombWarning),
            Pillow.open(io.BytesIO(data)) as image,
        ):
            original = image.size
            image.draft("RGB", box)
            image.thumbnail(box)
            small = image.convert("RGB")
    except (Pillow.DecompressionBombError, OSError, SyntaxError, ValueError):
        return None
    out = io.BytesIO()
    if small.size == original:  # small enough already: drawn pixel for pixel
        small.save(out, "PNG")
    else:
        small.save(out, "JPEG", quality=85)
    return out.getvalue(), small.size


def _timeline(report: ReturnReport, styles: dict[str, ParagraphStyle]) -> list[Flowable]:
    rows = [["Custody action", "Events", "First", "Last"]] + [
        [t.said, t.count, t.first.strftime("%Y-%m-%d"), t.last.strftime("%Y-%m-%d")]
        for t in report.timeline
    ]
    return [
        Paragraph("Custody timeline (summary)", styles["h2"]),
        _table(rows, [0.46, 0.14, 0.2, 0.2], styles),
    ]


def _ledger(report: ReturnReport, styles: dict[str, ParagraphStyle]) -> list[Flowable]:
    head = report.ledger
    if not head.intact:
        state = "chain BROKEN — do not rely on this report"
    elif not head.books_agree:
        state = (
            "chain of hashes unbroken, but the books DIFFER from it in "
            f"{len(report.discrepancies)} place(s), listed on the first page"
        )
    else:
        state = "chain intact; the loan's books agree with it"
    text = (
        f"This report was made from ledger event #{head.seq}, head hash "
        f"{head.hash} ({state}; {_esc(head.verification)}). To re-verify the whole chain: "
        f"<b>{_esc(head.verify_command)}</b> and <b>{_esc(head.audit_command)}</b> on the "
        "borrower's database, or run the verification recipe of tracker's docs/ledger.md over "
        "an exported ledger."
    )
    return [Paragraph("Ledger", styles["h2"]), Paragraph(text, styles["body"])]


def _signatures(styles: dict[str, ParagraphStyle]) -> list[Flowable]:
    line = (
        "Name: ______________________________<br/><br/>Signature: __________________________"
        "<br/><br/>Date: ______________"
    )
    rows = [
        [
            Paragraph("<b>For the lender</b><br/><br/>" + line, styles["body"]),
            Paragraph("<b>For the borrower</b><br/><br/>" + line, styles["body"]),
        ]
    ]
    return [
        Spacer(1, 8 * mm),
        KeepTogether(
            [Paragraph("Signatures", styles["h2"]), Table(rows, colWidths=[WIDTH / 2] * 2)]
        ),
    ]
