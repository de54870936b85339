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
    qr = label.qr
    origin = qr.symbol_box
    path = canvas.beginPath()
    for row, column, length in dark_runs(qr.symbol):
        x = origin.x + column * qr.module_mm
        top = origin.y + row * qr.module_mm
        path.rect(
            x * mm, (page_height - top - qr.module_mm) * mm, length * qr.module_mm * mm,
            qr.module_mm * mm,
        )  # fmt: skip
    canvas.setFillColorRGB(0, 0, 0)
    canvas.drawPath(path, stroke=0, fill=1)
    for line in label.lines:
        canvas.setFont(line.font, line.size_pt)
        canvas.drawString(line.box.x * mm, (page_height - line.baseline_mm) * mm, line.text)
