"""One typeface for measuring, the PDF and the PNG: Bitstream Vera, shipped with reportlab.

Text is shortened by measuring it with reportlab's ``stringWidth``; drawing the
PNG preview with the very same TrueType files (through Pillow) keeps what is
measured and what is drawn the same. Characters the font lacks are shown as
"?" rather than as an empty box.
"""

from __future__ import annotations

from functools import cache
from pathlib import Path

import reportlab
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.ttfonts import TTFont

REGULAR = "TrackerLabelSans"
BOLD = "TrackerLabelSans-Bold"
_FILES = {REGULAR: "Vera.ttf", BOLD: "VeraBd.ttf"}
ELLIPSIS = "…"
PT_TO_MM = 25.4 / 72


def font_file(name: str) -> Path:
    return Path(reportlab.__file__).parent / "fonts" / _FILES[name]


@cache
def register() -> None:
    """Make the fonts known to reportlab (once per process)."""
    for name in _FILES:
        pdfmetrics.registerFont(TTFont(name, str(font_file(name))))


@cache
def _covered(name: str) -> frozenset[int]:
    register()
    font = pdfmetrics.getFont(name)
    return frozenset(font.face.charToGlyph)


def printable(text: str, name: str = REGULAR) -> str:
    """``text`` on one line with every character the font cannot draw replaced by '?'."""
    covered = _covered(name)
    flat = " ".join(text.split())
    return "".join(char if ord(char) in covered else "?" for char in flat)


def width_mm(text: str, name: str, size_pt: float) -> float:
    register()
    return float(pdfmetrics.stringWidth(text, name, size_pt)) * PT_TO_MM


def line_height_mm(size_pt: float) -> float:
    """Baseline-to-baseline distance: 1.2 × the font size (common typesetting practice)."""
    return 1.2 * size_pt * PT_TO_MM


def ascent_mm(name: str, size_pt: float) -> float:
    register()
    ascent, _ = pdfmetrics.getAscentDescent(name, size_pt)
    return float(ascent) * PT_TO_MM


def descent_mm(name: str, size_pt: float) -> float:
    """How far below the baseline the font reaches (negative, as reportlab reports it)."""
    register()
    _, descent = pdfmetrics.getAscentDescent(name, size_pt)
    return float(descent) * PT_TO_MM


def shorten(text: str, name: str, size_pt: float, room_mm: float) -> str | None:
    """``text`` as it fits in ``room_mm``: whole, or cut with an ellipsis; None if nothing fits.

    The longest prefix whose width with the ellipsis is within the room wins
    (binary search on the prefix length; widths grow with length).
    """
    text = printable(text, name)
    if width_mm(text, name, size_pt) <= room_mm:
        return text
    if width_mm(ELLIPSIS, name, size_pt) > room_mm:
        return None
    low, high = 0, len(text)
    while low < high:
        middle = (low + high + 1) // 2
        if width_mm(text[:middle].rstrip() + ELLIPSIS, name, size_pt) <= room_mm:
            low = middle
        else:
            high = middle - 1
    return text[:low].rstrip() + ELLIPSIS
