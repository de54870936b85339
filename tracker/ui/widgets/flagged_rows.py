"""Table rows whose last column holds flags (or other words): it gets whatever width the
other columns leave, and wraps to more lines rather than being cut, at 80 columns as on a
wide terminal."""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

from rich.cells import cell_len
from rich.text import Text
from textual.widgets import DataTable

from tracker.present.bars import cell_height, flag_cell

LEAST_FLAGS_WIDTH = 13  # "⚠ near limit": narrower still, a flag wraps at every word
SCROLL_BAR = 1  # the tables' vertical scroll bar (tracker.tcss)

# The last column's heading, and how its words are drawn in a given width.
LastColumn = tuple[str, Callable[[Sequence[str], int], Text]]
FLAGS: LastColumn = ("Flags", flag_cell)


@dataclass(frozen=True)
class FlaggedRow:
    """A row's key, its cells before the last column, and the last column's flags or words."""

    key: str
    cells: Sequence[Text | str]
    flags: Sequence[str]


def fill(
    table: DataTable[Text | str],
    labels: Sequence[str],
    rows: Sequence[FlaggedRow],
    width: int,
    least_height: int = 1,
    last: LastColumn = FLAGS,
) -> None:
    """Replace ``table``'s columns and rows: every column as wide as its widest cell, and the
    last (the flags, unless told) the rest of ``width``, its words wrapped to fit."""
    widths = [
        max([len(label), *(_width(row.cells[n]) for row in rows)]) for n, label in enumerate(labels)
    ]
    room = width - sum(w + 2 * table.cell_padding for w in widths) - 2 * table.cell_padding
    flags_width = max(LEAST_FLAGS_WIDTH, room - SCROLL_BAR)
    heading, drawn = last
    table.clear(columns=True)
    for label, column_width in zip(labels, widths, strict=True):
        table.add_column(label, width=column_width)
    table.add_column(heading, width=flags_width)
    for row in rows:
        flags = drawn(row.flags, flags_width)
        height = max(least_height, cell_height(flags), *(cell_height(c) for c in row.cells))
        table.add_row(*row.cells, flags, height=height, key=row.key)


def _width(cell: Text | str) -> int:
    plain = cell.plain if isinstance(cell, Text) else cell
    return max(cell_len(line) for line in plain.split("\n"))
