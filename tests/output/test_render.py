"""Rendered labels read back: PDF pages rasterised by two independent rasterisers and the PNG
preview, decoded by zxing-cpp, give every payload exactly once, at the place the layout put it.
"""

from __future__ import annotations

import io
from collections import Counter

import pypdfium2
import pypdfium2.raw as pdfium_c
import pytest
from PIL import Image

from tests.output.label_samples import SHORT_PREFIX, many_labels
from tests.qr_reading import (
    Decoded,
    decode,
    pdfium_pages,
    pdftoppm_available,
    pdftoppm_pages,
)
from tracker.output.layout import Page, lay_out
from tracker.output.pdf import render_pdf
from tracker.output.png import render_png
from tracker.output.stocks import Stock, load_stock

DPI = 300
# Each sheet stock gets more labels than one sheet holds, starting mid-sheet; roll stocks
# (one label per page) get a few pages.
JOBS = [
    ("a4-65", 70, 9),
    ("letter-30", 35, 2),
    ("a4-24", 30, 1),
    ("letter-80", 20, 1),
    ("cryovial-wrap", 4, 1),
    ("cap-dot", 4, 1),
    ("specimen-bag", 3, 1),
]


def _job(name: str, count: int, start: int, prefix: str | None = None) -> tuple[Stock, list[Page]]:
    stock = load_stock(name)
    return stock, lay_out(stock, many_labels(count, prefix), start)


def _assert_page_reads_back(found: list[Decoded], page: Page) -> None:
    """Every payload once, and each symbol's centre inside the box the layout gave it."""
    expected = Counter(label.facts.payload for label in page.labels)
    assert Counter(d.text for d in found) == expected
    where = {label.facts.payload: label.qr.symbol_box for label in page.labels}
    for symbol in found:
        box = where[symbol.text]
        x, y = symbol.centre_mm
        assert box.x < x < box.right and box.y < y < box.bottom, (symbol, box)


@pytest.mark.parametrize(("name", "count", "start"), JOBS, ids=[j[0] for j in JOBS])
def test_every_label_in_the_pdf_decodes_to_its_payload_pdfium(
    name: str, count: int, start: int
) -> None:
    stock, pages = _job(name, count, start)
    images = pdfium_pages(render_pdf(stock, pages, "test"), DPI)  # rasterised by PDFium
    assert len(images) == len(pages)
    for image, page in zip(images, pages, strict=True):
        _assert_page_reads_back(decode(image, DPI), page)  # decoded by zxing-cpp


def test_labels_with_the_lab_link_prefix_decode_to_the_whole_link() -> None:
    stock, pages = _job("a4-65", 20, 1, SHORT_PREFIX)
    (image,) = pdfium_pages(render_pdf(stock, pages, "test"), DPI)
    found = decode(image, DPI)
    _assert_page_reads_back(found, pages[0])
    assert all(d.text.startswith(SHORT_PREFIX) for d in found)


@pytest.mark.parametrize("name", ["a4-65", "cap-dot"])
def test_every_label_in_the_pdf_decodes_to_its_payload_pdftoppm(name: str) -> None:
    if not pdftoppm_available():
        print("skipping: pdftoppm is not installed (apt-get install poppler-utils)")
        pytest.skip("pdftoppm is not installed (apt-get install poppler-utils)")
    stock, pages = _job(name, 70 if name == "a4-65" else 3, 1)
    images = pdftoppm_pages(render_pdf(stock, pages, "test"), DPI)  # poppler rasterises
    assert len(images) == len(pages)
    for image, page in zip(images, pages, strict=True):
        _assert_page_reads_back(decode(image, DPI), page)


@pytest.mark.parametrize("name", ["a4-65", "letter-30", "cap-dot", "cryovial-wrap"])
def test_every_label_in_the_png_preview_decodes_to_its_payload(name: str) -> None:
    stock, pages = _job(name, 40, 1)
    png = render_png(stock, pages[0], DPI)
    image = Image.open(io.BytesIO(png))
    assert image.info["dpi"] == pytest.approx((DPI, DPI), abs=0.01)  # PNG stores pixels per metre
    assert image.size == (
        round(stock.page_width_mm / 25.4 * DPI),
        round(stock.page_height_mm / 25.4 * DPI),
    )
    _assert_page_reads_back(decode(image, DPI), pages[0])


def test_the_pdf_is_vector_and_pages_have_the_stocks_size() -> None:
    stock, pages = _job("a4-65", 70, 1)
    document = pypdfium2.PdfDocument(render_pdf(stock, pages, "test"))
    try:
        for index in range(len(document)):
            page = document[index]
            width, height = page.get_size()  # PDF points
            assert (width * 25.4 / 72, height * 25.4 / 72) == pytest.approx((210, 297), abs=0.01)
            kinds = {obj.type for obj in page.get_objects()}
            assert pdfium_c.FPDF_PAGEOBJ_IMAGE not in kinds  # no raster images: QR as paths
            assert pdfium_c.FPDF_PAGEOBJ_PATH in kinds and pdfium_c.FPDF_PAGEOBJ_TEXT in kinds
    finally:
        document.close()


def test_the_same_labels_give_the_same_bytes() -> None:
    """Reproducible PDFs: the SHA-256 in the ledger identifies the document, not the moment."""
    stock, pages = _job("letter-30", 12, 1)
    assert render_pdf(stock, pages, "job") == render_pdf(stock, pages, "job")
    other = lay_out(stock, many_labels(13), 1)
    assert render_pdf(stock, other, "job") != render_pdf(stock, pages, "job")


def test_the_text_is_in_the_pdf() -> None:
    stock, pages = _job("a4-24", 3, 1)
    document = pypdfium2.PdfDocument(render_pdf(stock, pages, "test"))
    try:
        text = document[0].get_textpage().get_text_range()  # PDFium's own text extraction
    finally:
        document.close()
    for label in pages[0].labels:
        for line in label.lines:
            assert line.text.replace("…", "") in text.replace("\r", "").replace("…", "")
