"""Vector PDF of laid-out labels: QR modules as filled squares, text in an embedded font.

Nothing is rasterised, so the printer draws the QR modules at its own
resolution. The document is reproducible (reportlab's invariant mode: no
creation time, no random document ID), so the same labels on the same stock
give the same bytes and the same SHA-256.
"""

from __future__ import annotations

import io

from reportlab.lib.units import mm
from reportlab.pdfgen.canvas import Canvas

from tracker.output import fonts
from tracker.output.layout import Page, PlacedLabel
from tracker.output.qr import dark_runs
from tracker.output.stocks import Stock


def render_pdf(stock: Stock, pages: list[Page], title: str) -> bytes:
    """One PDF page per sheet (or per label on a roll stock)."""
    fonts.register()
    buffer = io.BytesIO()
    canvas = Canvas(
        buffer,
        pagesize=(stock.page_width_mm * mm, stock.page_height_mm * mm),
        invariant=True,
        pageCompression=1,
    )
    canvas.setTitle(title)
    canvas.setCreator("tracker")
    for page in pages:
        for label in page.labels:
            _draw(canvas, stock.page_height_mm, label)
        canvas.showPage()
    canvas.save()
    return buffer.getvalue()


def _draw(canvas: Canvas, page_height: float, label: PlacedLabel) -> None:
    """Draw one label; layout boxes are top-down, PDF coordinates bottom-up."""
    canvas.setFillColorRGB(0, 0, 0)
    canvas.addLiteral(_symbol_operators(page_height, label))
    for line in label.lines:
        canvas.setFont(line.font, line.size_pt)
        canvas.drawString(line.box.x * mm, (page_height - line.baseline_mm) * mm, line.text)


def _symbol_operators(page_height: float, label: PlacedLabel) -> str:
    """The QR symbol as PDF path operators, drawn in module units.

    One transformation puts the symbol's top-left corner at the origin with one module per
    unit and y pointing down, so each run of dark modules is a rectangle with whole-number
    corners: ``column row length 1 re``. All runs are one path, filled once (no seams).
    """
    qr = label.qr
    origin = qr.symbol_box
    size = qr.module_mm * mm
    corner = (_number(origin.x * mm), _number((page_height - origin.y) * mm))
    head = f"q {_number(size)} 0 0 {_number(-size)} {corner[0]} {corner[1]} cm\n"
    runs = "".join(f"{c} {r} {n} 1 re\n" for r, c, n in dark_runs(qr.symbol))
    return f"{head}{runs}f Q"


def _number(value: float) -> str:
    """A PDF number: fixed point, no exponent, trailing zeros dropped (reproducible)."""
    text = f"{value:.6f}".rstrip("0").rstrip(".")
    return text if text not in ("", "-0") else "0"
