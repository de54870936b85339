"""Layout: every QR code and line of text inside its label, every label inside the page.

Text widths are measured again here with reportlab's stringWidth (the same
metrics the PDF embeds); QR sizes are checked against the qrcode library and
the figures in check-values.md.
"""

from __future__ import annotations

import math

import pytest
import qrcode
import qrcode.constants
from reportlab.pdfbase.pdfmetrics import stringWidth

from tests.output.label_samples import PREFIX, SHORT_PREFIX, many_labels, sample_labels
from tracker.domain.errors import InputError
from tracker.domain.labels import LabelFacts
from tracker.output import fonts
from tracker.output.geometry import Box
from tracker.output.layout import MIN_PT, PlacedLabel, Region, lay_out, place
from tracker.output.qr import QUIET_ZONE_MODULES, encode
from tracker.output.stocks import MIN_MODULE_MM, Stock, entries, load_stock

PRESETS = sorted(entries())
PT = 25.4 / 72  # mm per PostScript point (1 pt = 1/72 in)


def _overlap(a: Box, b: Box) -> bool:
    return a.x < b.right and b.x < a.right and a.y < b.bottom and b.y < a.bottom


def assert_inside(stock: Stock, label: PlacedLabel) -> None:
    """The checks the issue asks for, each measured independently of the layout code."""
    region = Region.of(stock, label.cell)
    assert label.cell.within(stock.page)
    assert region.box.within(label.cell)
    qr = label.qr
    assert qr.module_mm >= MIN_MODULE_MM
    # the quiet zone: 4 modules on each side (ISO/IEC 18004, from memory)
    assert qr.box.w == pytest.approx(qr.module_mm * (qr.symbol.modules + 2 * QUIET_ZONE_MODULES))
    assert region.fits(qr.box)
    assert label.lines, "the ID must be printed as text"
    assert label.lines[0].text == label.facts.item  # the ID itself, whole, first
    for line in label.lines:
        assert region.fits(line.box), (line.text, line.box, region.box)
        assert not _overlap(line.box, qr.box), "text in the QR code's quiet zone"
        measured = stringWidth(line.text, line.font, line.size_pt) * PT  # reportlab metrics
        assert measured <= line.box.w + 1e-9
        assert line.size_pt >= MIN_PT
    for a, b in zip(label.lines, label.lines[1:], strict=False):
        assert a.box.bottom <= b.box.y + 1e-9  # lines do not overlap each other


# A link prefix makes the symbol version 2 or 3 (8.25 or 9.25 mm with the quiet zone at
# 0.25 mm); with the ID under it that may not fit a 15 mm dot. There a label must either fit
# (and pass every check) or be refused in one line, never be squeezed.
MAY_REFUSE = {("cap-dot", SHORT_PREFIX), ("cap-dot", PREFIX)}


@pytest.mark.parametrize("name", PRESETS)
@pytest.mark.parametrize("prefix", [None, SHORT_PREFIX, PREFIX], ids=["id", "short", "long"])
def test_every_kind_of_label_fits_inside_its_cell_on_every_preset(
    name: str, prefix: str | None
) -> None:
    stock = load_stock(name)
    for number in (42, 999_999):  # 5 and 6 digits: wider IDs
        for facts in sample_labels(number, prefix):
            cell = stock.cell(stock.per_sheet - 1)  # the last cell: farthest from the origin
            try:
                label = place(stock, cell, facts)
            except InputError as refused:
                assert (name, prefix) in MAY_REFUSE, refused.one_line()
                assert refused.field == "stock" and "has no room" in refused.reason
                continue
            assert_inside(stock, label)


@pytest.mark.parametrize("name", ["a4-65", "letter-30", "a4-24"])
def test_a_full_job_fills_sheets_row_by_row_from_the_start_position(name: str) -> None:
    stock = load_stock(name)
    start = 4
    labels = many_labels(2 * stock.per_sheet)
    pages = lay_out(stock, labels, start)
    expected_pages = math.ceil((start - 1 + len(labels)) / stock.per_sheet)
    assert len(pages) == expected_pages
    assert len(pages[0].labels) == stock.per_sheet - start + 1
    assert [p.facts for page in pages for p in page.labels] == labels  # order kept
    assert pages[0].labels[0].cell == stock.cell(start - 1)
    assert pages[1].labels[0].cell == stock.cell(0)
    for page in pages:
        cells = [label.cell for label in page.labels]
        assert len(set(cells)) == len(cells)
        for label in page.labels:
            assert_inside(stock, label)


def test_long_text_is_shortened_with_an_ellipsis_never_overflowing() -> None:
    stock = load_stock("a4-65")
    facts = LabelFacts("SP-00042-E", "specimen", ("W" * 200, "x"), "SP-00042-E")
    label = place(stock, stock.cell(0), facts)
    shortened = label.lines[1].text
    assert shortened.endswith(fonts.ELLIPSIS) and shortened.startswith("WWW")
    room = Region.of(stock, label.cell).box.right - label.lines[1].box.x
    assert stringWidth(shortened, label.lines[1].font, label.lines[1].size_pt) * PT <= room
    one_more = shortened[:-1] + "W" + fonts.ELLIPSIS  # the longest prefix that fits was chosen
    assert stringWidth(one_more, label.lines[1].font, label.lines[1].size_pt) * PT > room


def test_lines_that_find_no_room_are_dropped_from_the_end() -> None:
    stock = load_stock("cryovial-wrap")
    facts = LabelFacts("AQ-00007-C", "aliquot", tuple(f"line {n}" for n in range(12)), "AQ-00007-C")
    label = place(stock, stock.cell(0), facts)
    kept = [line.text for line in label.lines[1:]]
    assert kept == [f"line {n}" for n in range(len(kept))] and label.dropped == 12 - len(kept)


def test_characters_the_font_lacks_are_shown_as_question_marks() -> None:
    stock = load_stock("a4-24")
    facts = LabelFacts("SO-00001-M", "solution", ("δ44/40Ca µg ±",), "SO-00001-M")
    line = place(stock, stock.cell(0), facts).lines[1]
    assert line.text == "?44/40Ca µg ±"  # Bitstream Vera has µ and ± (Latin-1), not Greek δ


def test_qr_sizes_agree_with_the_qrcode_library_and_check_values() -> None:
    # check-values.md (lib: qrcode 8.2): a 20-character upper-case payload at level M is
    # version 1, 21 × 21 modules; lower case forces byte mode and version 2.
    twenty = "SP-00042-E" + "ABCDEFGHIJ"
    assert (encode(twenty).version, encode(twenty).modules) == (1, 21)
    assert encode(twenty.lower()).version == 2
    for payload in ("PW-00001-5", PREFIX + "PW-00001-5", "x" * 100):
        reference = qrcode.QRCode(error_correction=qrcode.constants.ERROR_CORRECT_M, border=0)
        reference.add_data(payload)
        reference.make(fit=True)
        assert encode(payload).version == reference.version  # the qrcode library
    # computed in check-values.md: 0.25 mm/module, V1 with quiet zone = 7.25 mm
    assert encode("PW-00001-5").with_quiet_zone * MIN_MODULE_MM == pytest.approx(7.25)


def test_a_payload_too_long_for_the_stock_is_refused_in_one_line() -> None:
    stock = load_stock("cap-dot")
    long_prefix = "HTTPS://A-VERY-LONG-HOST-NAME.LABELS.EXAMPLE.INVALID/SAMPLES/ITEM/"
    facts = sample_labels(42, long_prefix)[0]
    with pytest.raises(InputError) as caught:
        place(stock, stock.cell(0), facts)
    error = caught.value
    assert (error.field, error.value) == ("stock", "cap-dot")
    assert facts.item in error.reason and "0.25 mm" in error.reason
    assert "\n" not in error.one_line()


def test_an_id_that_cannot_be_printed_whole_is_refused_not_shortened() -> None:
    # a 12-digit ID is too wide for a 15 mm dot at the smallest type
    stock = load_stock("cap-dot")
    facts = LabelFacts("SP-123456789012-X", "specimen", (), "SP123456789012X")
    with pytest.raises(InputError, match="whole ID in text"):
        place(stock, stock.cell(0), facts)


def test_bigger_modules_are_used_when_there_is_room() -> None:
    stock = load_stock("specimen-bag")
    label = place(stock, stock.cell(0), sample_labels()[0])
    assert label.qr.module_mm == stock.max_module_mm
