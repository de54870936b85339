"""The return report's PDF pieces: its font, and cells that wrap only when they must."""

from __future__ import annotations

from pathlib import Path

import matplotlib
from reportlab.platypus import Paragraph

from tracker.output import report_pdf


def test_the_report_font_is_found_where_matplotlib_keeps_it() -> None:
    """Found without importing matplotlib, the folder is the one matplotlib names itself."""
    assert report_pdf._matplotlib_data() == Path(matplotlib.get_data_path())
    assert (report_pdf._matplotlib_data() / "fonts" / "ttf" / "DejaVuSans.ttf").is_file()


def test_a_cell_that_fits_is_drawn_as_text_and_a_longer_one_wraps() -> None:
    styles = report_pdf._styles()
    width = 0.2 * report_pdf.WIDTH
    assert report_pdf._cell("δ44/40 -0.672 ‰", width, styles) == "δ44/40 -0.672 ‰"
    assert report_pdf._cell(None, width, styles) == "—"
    long = "complete; a crack along the root, glued by the lender before the loan " * 2
    wrapped = report_pdf._cell(long, width, styles)
    assert isinstance(wrapped, Paragraph)
    assert wrapped.wrap(width, 1000)[1] > 3 * styles["small"].leading  # several lines
    two_lines = report_pdf._cell("first\nsecond", width, styles)
    assert isinstance(two_lines, Paragraph)
