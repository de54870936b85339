"""Flags in a narrow table cell: wrapped at the cell's width, never cut, every one shown."""

from __future__ import annotations

from hypothesis import given
from hypothesis import strategies as st

from tracker.present.bars import FLAG_SYMBOLS, cell_height, flag_cell

words = st.text(alphabet="abcdefghij:0123456789", min_size=1, max_size=12)
flag = st.lists(words, min_size=1, max_size=5).map(" ".join)


@given(flags=st.lists(flag, min_size=1, max_size=5), width=st.integers(min_value=8, max_value=40))
def test_every_flag_is_shown_whole_within_the_width(flags: list[str], width: int) -> None:
    cell = flag_cell(flags, width)
    lines = cell.plain.split("\n")
    assert all(len(line) <= width for line in lines)
    assert cell_height(cell) == len(lines)
    shown: list[str] = []
    for line in lines:  # a line starting with two spaces carries on the flag above
        if line.startswith("  "):
            shown[-1] += " " + line.strip()
        else:
            shown.append(line.split(" ", 1)[1])
    assert sorted(s.replace(" ", "") for s in shown) == sorted(f.replace(" ", "") for f in flags)


def test_the_most_serious_flag_comes_first_with_its_mark() -> None:
    cell = flag_cell(["powder to return", "over limit", "due within 30 days"], 20).plain
    assert cell.split("\n") == ["✗ over limit", "⚠ due within 30 days", "↩ powder to return"]
    assert FLAG_SYMBOLS["over limit"] == "✗"


def test_no_flags_is_ok() -> None:
    assert flag_cell([], 10).plain == "✓ ok"
