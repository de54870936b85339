"""The house table for lists: aligned plain text, drawn line by line.

A list can be long: a whole lab's specimens in reconcile, a session's thousand targets. A
general table measures and wraps every cell through several layers of renderables, about
half a millisecond a row, so twenty thousand rows took ten seconds to print. This table
measures each cell once, pads it to its column, and wraps only the cells that do not fit
the terminal's width. It looks as the lists always have: a header, a rule under it, no
cell borders, the first column (an ID) never broken.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from functools import lru_cache

from rich.cells import cell_len
from rich.console import Console, ConsoleOptions, RenderResult
from rich.measure import Measurement
from rich.segment import Segment
from rich.style import Style
from rich.text import Text

from tracker.domain.text_rules import visible

Cell = str | Text
Line = list[Segment]  # one printed line of a cell

EDGE = "  "  # before the first column: the edge and the cell's padding
GAP = "   "  # between columns: padding, divider, padding
NARROWEST = 6  # a column is never wrapped narrower than this many characters
HEADER = Style(bold=True)
TITLE = Style(italic=True)


@dataclass
class AlignedTable:
    """Rows of cells under headers; a cell is text, several lines where it holds line feeds."""

    headers: tuple[str, ...]
    whole: int = 1  # how many leading columns are never wrapped (IDs, slots)
    title: str | None = None
    rows: list[list[Cell]] = field(default_factory=list)
    widths: list[int] = field(init=False)

    def __post_init__(self) -> None:
        self.widths = [cell_width(header) for header in self.headers]

    def add_row(self, *cells: Cell) -> None:
        """A row; each column's natural width (its longest line) is kept as rows come."""
        if len(cells) != len(self.headers):
            raise ValueError(f"a row of {len(cells)} cells under {len(self.headers)} headers")
        row = [cell if isinstance(cell, Text) else visible(cell) for cell in cells]
        for number, cell in enumerate(row):
            plain = cell.plain if isinstance(cell, Text) else cell
            width = max(map(cell_width, plain.split("\n")))
            if width > self.widths[number]:
                self.widths[number] = width
        self.rows.append(row)

    def __rich_measure__(self, console: Console, options: ConsoleOptions) -> Measurement:
        widest = _frame(len(self.headers)) + sum(self.widths)
        return Measurement(min(widest, options.max_width), widest)

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        widths = _fitted(self, options.max_width)
        if self.title is not None:
            yield Segment(self.title, TITLE)
        yield Segment.line()
        yield from _row(list(self.headers), widths, console, HEADER)
        rule = sum(widths) + _frame(len(widths))
        yield Segment(" " + "─" * rule)
        yield Segment.line()
        for row in self.rows:
            yield from _row(row, widths, console, None)
        yield Segment.line()


def cell_width(text: str) -> int:
    """Terminal cells ``text`` takes, as rich counts them (a character at a time). Plain
    ASCII takes one a character, which ``len`` counts at once; of other text only the
    non-ASCII characters (‰, ±, δ, ✓ …) are looked up, each once per process. rich's own
    count of a new text takes about 3 µs a cell (0.7 µs here): 0.1 s over a session's rows."""
    if text.isascii():
        return len(text)
    others = text.translate(_WITHOUT_ASCII)
    return len(text) - len(others) + sum(map(_character_cells, others))


_WITHOUT_ASCII = dict.fromkeys(range(128))  # str.translate: every ASCII character removed


@lru_cache(maxsize=4096)
def _character_cells(character: str) -> int:
    return cell_len(character)


def _length(line: Line) -> int:
    return sum(cell_width(segment.text) for segment in line)


def _frame(columns: int) -> int:
    """Characters a row spends outside its cells: the edge and the gaps between columns."""
    return len(EDGE) + len(GAP) * (columns - 1)


def _fitted(table: AlignedTable, room: int) -> list[int]:
    """Column widths that fit ``room``, as a reader would want them: the widest column
    after the ``whole`` ones gives a character at a time, first down to its longest word
    (so words stay whole), then down to ``NARROWEST``; what still does not fit runs past
    the edge."""
    fitted = list(table.widths)
    excess = sum(fitted) + _frame(len(fitted)) - room
    if excess <= 0:
        return fitted
    for floor in (_longest_words(table), [NARROWEST] * len(fitted)):
        while excess > 0:
            shrinkable = [n for n in range(table.whole, len(fitted)) if fitted[n] > floor[n]]
            if not shrinkable:
                break
            fitted[max(shrinkable, key=fitted.__getitem__)] -= 1
            excess -= 1
    return fitted


def _longest_words(table: AlignedTable) -> list[int]:
    """Each column's longest word (header included): narrower, a word would break."""
    longest = [max(map(cell_width, header.split()), default=0) for header in table.headers]
    for row in table.rows:
        for number, cell in enumerate(row):
            plain = cell.plain if isinstance(cell, Text) else cell
            words = max(map(cell_width, plain.split()), default=0)
            if words > longest[number]:
                longest[number] = words
    return longest


def _row(
    cells: list[Cell], widths: list[int], console: Console, style: Style | None
) -> RenderResult:
    drawn = [_drawn(cell, width, console, style) for cell, width in zip(cells, widths, strict=True)]
    for number in range(max(1, *(len(lines) for lines in drawn))):
        line = [lines[number] if number < len(lines) else [] for lines in drawn]
        last = max((column for column, part in enumerate(line) if part), default=0)
        pieces = [Segment(EDGE)]
        for column in range(last + 1):
            pieces += line[column]
            if column < last:
                pieces.append(Segment(" " * (widths[column] - _length(line[column])) + GAP))
        yield from Segment.simplify(pieces)  # one segment per run of one style: fewer to print
        yield Segment.line()


def _drawn(cell: Cell, width: int, console: Console, style: Style | None) -> list[Line]:
    """The cell's printed lines, those longer than ``width`` broken between words."""
    if isinstance(cell, str) and "\n" not in cell and cell_width(cell) <= width:
        return [[Segment(cell, style)]] if cell else []
    text = cell if isinstance(cell, Text) else Text(cell, style=style or "")
    if any(cell_width(line) > width for line in text.plain.split("\n")):
        return [list(_segments(line, console)) for line in text.wrap(console, width)]
    lines = list(Segment.split_lines(_segments(text, console)))
    return lines + [[]] * (text.plain.count("\n") + 1 - len(lines))  # a last line left empty


def _segments(text: Text, console: Console) -> Iterable[Segment]:
    """``text`` as printed: its spans' styles over its own style (which ``Text.render``
    leaves to whoever prints it)."""
    base = console.get_style(text.style) if text.style else None
    return Segment.apply_style(text.render(console), base)
