"""PNG preview of one sheet, drawn from the same layout boxes and the same font files.

Label outlines are drawn in light grey so a person can check the fit against
the stock; the PDF for printing has none. QR modules are snapped to whole
pixels, as a printer snaps them to dots.
"""

from __future__ import annotations

import io
from functools import cache

from PIL import Image, ImageDraw, ImageFont

from tracker.output import fonts
from tracker.output.geometry import Box
from tracker.output.layout import Page, PlacedLabel
from tracker.output.qr import dark_runs
from tracker.output.stocks import Stock

OUTLINE = 200  # light grey, well away from the dark modules a decoder looks for
MM_PER_INCH = 25.4


def page_pixels(stock: Stock, dpi: int) -> tuple[int, int]:
    """The preview's width and height in pixels: the stock's page at ``dpi``."""
    scale = dpi / MM_PER_INCH
    return round(stock.page_width_mm * scale), round(stock.page_height_mm * scale)


def render_png(stock: Stock, page: Page, dpi: int) -> bytes:
    scale = dpi / MM_PER_INCH
    image = Image.new("L", page_pixels(stock, dpi), 255)
    draw = ImageDraw.Draw(image)
    for index in range(stock.per_sheet):
        _outline(draw, stock.cell(index), scale, stock.shape == "round")
    for label in page.labels:
        _draw(draw, label, scale)
    buffer = io.BytesIO()
    image.save(buffer, "PNG", dpi=(dpi, dpi))
    return buffer.getvalue()


def _px(value: float, scale: float) -> int:
    return round(value * scale)


def _outline(draw: ImageDraw.ImageDraw, cell: Box, scale: float, round_: bool) -> None:
    corners = [
        _px(cell.x, scale),
        _px(cell.y, scale),
        _px(cell.right, scale) - 1,
        _px(cell.bottom, scale) - 1,
    ]
    if round_:
        draw.ellipse(corners, outline=OUTLINE)
    else:
        draw.rectangle(corners, outline=OUTLINE)


def _draw(draw: ImageDraw.ImageDraw, label: PlacedLabel, scale: float) -> None:
    qr = label.qr
    origin = qr.symbol_box
    for row, column, length in dark_runs(qr.symbol):
        left = origin.x + column * qr.module_mm
        top = origin.y + row * qr.module_mm
        draw.rectangle(
            [
                _px(left, scale),
                _px(top, scale),
                _px(left + length * qr.module_mm, scale) - 1,
                _px(top + qr.module_mm, scale) - 1,
            ],
            fill=0,
        )
    for line in label.lines:
        font = _font(line.font, round(line.size_pt / 72 * MM_PER_INCH * scale, 2))
        anchor = (_px(line.box.x, scale), _px(line.baseline_mm, scale))
        draw.text(anchor, line.text, font=font, fill=0, anchor="ls")


@cache
def _font(name: str, pixels: float) -> ImageFont.FreeTypeFont:
    return ImageFont.truetype(str(fonts.font_file(name)), size=pixels)
