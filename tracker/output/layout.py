"""Where everything goes: labels onto sheets, and the QR code and text lines inside each label.

Layout is decided once, as boxes in millimetres, and the PDF and PNG renderers
only draw those boxes, so a test can prove for every label that its QR code
(with its quiet zone) and every line of text lie inside the label, and every
label inside the page. Text is measured with the font's own metrics; a line
too long is shortened with an ellipsis, never allowed to overflow, and the ID
itself is never shortened — a label that cannot show its whole ID is refused.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from tracker.domain.errors import InputError
from tracker.domain.labels import LabelFacts
from tracker.output import fonts
from tracker.output.geometry import Box
from tracker.output.qr import QrSymbol, encode
from tracker.output.stocks import MIN_MODULE_MM, Stock, check_start

MIN_PT = 4.0  # smallest type tracker prints (~1.4 mm capitals; common practice for vial labels)
_SIZE_STEP_PT = 0.25
_MODULE_STEP_MM = 0.01


@dataclass(frozen=True)
class TextLine:
    text: str
    font: str
    size_pt: float
    box: Box  # the measured text width × one line height
    baseline_mm: float


@dataclass(frozen=True)
class QrPlacement:
    symbol: QrSymbol
    module_mm: float
    box: Box  # the symbol with its quiet zone

    @property
    def symbol_box(self) -> Box:
        return self.box.inset(
            self.module_mm * (self.symbol.with_quiet_zone - self.symbol.modules) / 2
        )


@dataclass(frozen=True)
class PlacedLabel:
    facts: LabelFacts
    cell: Box
    qr: QrPlacement
    lines: tuple[TextLine, ...]
    dropped: int  # lines of text that found no room


@dataclass(frozen=True)
class Page:
    labels: tuple[PlacedLabel, ...]


@dataclass(frozen=True)
class Region:
    """The part of a label that may be printed on: a padded rectangle, or a padded circle."""

    box: Box
    round: bool

    @classmethod
    def of(cls, stock: Stock, cell: Box) -> Region:
        return cls(cell.inset(stock.padding_mm), stock.shape == "round")

    def fits(self, box: Box) -> bool:
        if self.round:
            return box.within_circle(self.box.centre, self.box.w / 2)
        return box.within(self.box)

    def span(self, top: float, bottom: float) -> tuple[float, float] | None:
        """The horizontal extent usable over the whole band from ``top`` to ``bottom``."""
        if top < self.box.y or bottom > self.box.bottom:
            return None
        if not self.round:
            return self.box.x, self.box.right
        cx, cy = self.box.centre
        radius = self.box.w / 2
        farthest = max(abs(top - cy), abs(bottom - cy))
        if farthest > radius:
            return None
        half = math.sqrt(radius * radius - farthest * farthest)
        return cx - half, cx + half


def lay_out(stock: Stock, labels: Sequence[LabelFacts], start: int = 1) -> list[Page]:
    """Labels onto pages row by row, the first one at position ``start`` of the first sheet."""
    check_start(stock, start)
    pages: list[Page] = []
    current: list[PlacedLabel] = []
    slot = start - 1
    for facts in labels:
        if slot == stock.per_sheet:
            pages.append(Page(tuple(current)))
            current, slot = [], 0
        current.append(place(stock, stock.cell(slot), facts))
        slot += 1
    if current:
        pages.append(Page(tuple(current)))
    return pages


def place(stock: Stock, cell: Box, facts: LabelFacts) -> PlacedLabel:
    """One label: the largest QR module (up to the stock's) that leaves room for the whole ID."""
    symbol = encode(facts.payload, stock.error_correction)
    region = Region.of(stock, cell)
    arrange = _side if stock.layout == "side" else _stacked
    for module in _module_sizes(stock):
        placed = arrange(stock, region, symbol, module, facts)
        if placed is not None:
            qr_box, lines, dropped = placed
            return PlacedLabel(facts, cell, QrPlacement(symbol, module, qr_box), lines, dropped)
    raise InputError("stock", stock.name, _no_room(stock, symbol, facts))


def _no_room(stock: Stock, symbol: QrSymbol, facts: LabelFacts) -> str:
    smallest = symbol.with_quiet_zone * MIN_MODULE_MM
    return (
        f"has no room for {facts.item}: its QR payload ({len(facts.payload)} characters) needs "
        f"version {symbol.version}, {symbol.modules} modules, {smallest:.2f} mm square with "
        f"the quiet zone at the {MIN_MODULE_MM} mm smallest module, beside the whole ID in "
        f"text at {MIN_PT:g} pt or more; the {stock.label_width_mm:g} × "
        f"{stock.label_height_mm:g} mm label has less"
    )


def _module_sizes(stock: Stock) -> list[float]:
    """Candidate module sizes from the stock's largest down to the smallest allowed."""
    count = math.floor((stock.max_module_mm - MIN_MODULE_MM) / _MODULE_STEP_MM + 1e-9)
    sizes = [round(stock.max_module_mm - i * _MODULE_STEP_MM, 6) for i in range(count + 1)]
    return [*sizes, MIN_MODULE_MM] if sizes[-1] > MIN_MODULE_MM else sizes


def _id_sizes(stock: Stock) -> list[float]:
    count = math.floor((stock.id_pt - MIN_PT) / _SIZE_STEP_PT + 1e-9)
    return [stock.id_pt - i * _SIZE_STEP_PT for i in range(count + 1)]


Arranged = tuple[Box, tuple[TextLine, ...], int]


def _text_line(text: str, font: str, size: float, x: float, top: float) -> TextLine:
    height = fonts.line_height_mm(size)
    ascent = fonts.ascent_mm(font, size)
    extent = ascent - fonts.descent_mm(font, size)
    baseline = top + (height - extent) / 2 + ascent
    box = Box(x, top, fonts.width_mm(text, font, size), height)
    return TextLine(text, font, size, box, baseline)


def _side(
    stock: Stock, region: Region, symbol: QrSymbol, module: float, facts: LabelFacts
) -> Arranged | None:
    """QR on the left, text to its right: ID in bold, then the facts while they fit."""
    area = region.box
    side = module * symbol.with_quiet_zone
    if side > area.h or side >= area.w:
        return None
    text_x, room = area.x + side, area.right - area.x - side
    identity = fonts.printable(facts.item, fonts.BOLD)
    id_size = next(
        (s for s in _id_sizes(stock) if fonts.width_mm(identity, fonts.BOLD, s) <= room), None
    )
    if id_size is None:
        return None
    wanted = [(identity, fonts.BOLD, id_size)]
    size = min(stock.text_pt, id_size)
    wanted += [(line, fonts.REGULAR, size) for line in facts.lines]
    chosen: list[tuple[str, str, float]] = []
    used = 0.0
    for text, font, pt in wanted:
        height = fonts.line_height_mm(pt)
        shown = text if font == fonts.BOLD else fonts.shorten(text, font, pt, room)
        if shown is None or used + height > area.h:
            break
        chosen.append((shown, font, pt))
        used += height
    top = area.y + (area.h - used) / 2
    lines: list[TextLine] = []
    for text, font, pt in chosen:
        lines.append(_text_line(text, font, pt, text_x, top))
        top += fonts.line_height_mm(pt)
    qr_box = Box(area.x, area.y + (area.h - side) / 2, side, side)
    return qr_box, tuple(lines), len(wanted) - len(chosen)


def _stacked(
    stock: Stock, region: Region, symbol: QrSymbol, module: float, facts: LabelFacts
) -> Arranged | None:
    """QR above, the ID centred below it, then the facts while they fit (round labels too)."""
    side = module * symbol.with_quiet_zone
    identity = fonts.printable(facts.item, fonts.BOLD)
    for id_size in _id_sizes(stock):
        base = _stack(region, side, [(identity, fonts.BOLD, id_size, True)])
        if base is None:
            continue
        specs = [(identity, fonts.BOLD, id_size, True)]
        size = min(stock.text_pt, id_size)
        best = base
        for line in facts.lines:
            trial = _stack(region, side, [*specs, (line, fonts.REGULAR, size, False)])
            if trial is None:
                break
            specs.append((line, fonts.REGULAR, size, False))
            best = trial
        qr_box, lines = best
        return qr_box, lines, len(facts.lines) + 1 - len(lines)
    return None


def _stack(
    region: Region, side: float, specs: list[tuple[str, str, float, bool]]
) -> tuple[Box, tuple[TextLine, ...]] | None:
    """The QR and lines stacked and centred in the region, or None when any box falls outside."""
    total = side + sum(fonts.line_height_mm(size) for _, _, size, _ in specs)
    cx, cy = region.box.centre
    top = cy - total / 2
    qr_box = Box(cx - side / 2, top, side, side)
    if not region.fits(qr_box):
        return None
    lines: list[TextLine] = []
    y = top + side
    for text, font, size, whole in specs:
        height = fonts.line_height_mm(size)
        span = region.span(y, y + height)
        if span is None:
            return None
        room = span[1] - span[0]
        shown = fonts.printable(text, font)
        if fonts.width_mm(shown, font, size) > room:
            if whole:
                return None
            shortened = fonts.shorten(text, font, size, room)
            if shortened is None:
                return None
            shown = shortened
        width = fonts.width_mm(shown, font, size)
        line = _text_line(shown, font, size, cx - width / 2, y)
        if not region.fits(line.box):
            return None
        lines.append(line)
        y += height
    return qr_box, tuple(lines)
