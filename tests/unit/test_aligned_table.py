"""The house table for lists against rich's own table, the general-purpose reference it
replaces: where everything fits, the same text line for line; where it does not, every
line fits, words stay whole while they can, and the first column is never broken."""

from __future__ import annotations

import io

from hypothesis import given, settings
from hypothesis import strategies as st
from rich import box
from rich.cells import cell_len
from rich.console import Console
from rich.table import Table
from rich.text import Text

from tracker.present.aligned import AlignedTable, cell_width

WORD = st.text(alphabet="abcdefghijklmnopqrstuvwxyz0123456789-/.±‰µ", min_size=1, max_size=9)
CELL = st.lists(st.lists(WORD, min_size=0, max_size=3).map(" ".join), min_size=1, max_size=3).map(
    "\n".join
)


def printed(renderable: object, width: int) -> list[str]:
    console = Console(width=width, record=True, file=io.StringIO(), color_system=None)
    console.print(renderable)
    return [line.rstrip() for line in console.export_text().splitlines()]


def both(headers: list[str], rows: list[list[str]]) -> tuple[AlignedTable, Table]:
    ours = AlignedTable(tuple(headers))
    theirs = Table(box=box.SIMPLE_HEAD, padding=(0, 1))
    for number, header in enumerate(headers):
        theirs.add_column(header, no_wrap=number == 0)
    for row in rows:
        ours.add_row(*row)
        theirs.add_row(*row)
    return ours, theirs


@settings(max_examples=200, deadline=None)
@given(
    st.integers(1, 5).flatmap(
        lambda n: st.tuples(
            st.lists(WORD, min_size=n, max_size=n),
            st.lists(st.lists(CELL, min_size=n, max_size=n), max_size=6),
        )
    )
)
def test_where_everything_fits_it_prints_what_rich_prints(
    table: tuple[list[str], list[list[str]]],
) -> None:
    headers, rows = table
    ours, theirs = both(headers, rows)
    assert printed(ours, 400) == printed(theirs, 400)


def test_styles_of_a_text_cell_are_kept_and_a_header_is_bold() -> None:
    table = AlignedTable(("specimen", "flags"))
    table.add_row(Text.assemble("SP-00001-W\n", ("KF 1", "dim")), Text("overdue", "bold red"))
    console = Console(width=80, record=True, file=io.StringIO(), force_terminal=True)
    console.print(table)
    styled = console.export_text(styles=True)
    assert "\x1b[1mspecimen" in styled and "\x1b[2mKF 1" in styled and "\x1b[1;31moverdue" in styled


@settings(max_examples=100, deadline=None)
@given(
    st.lists(st.lists(CELL, min_size=3, max_size=3), min_size=1, max_size=5),
    st.integers(60, 100),
)
def test_a_table_too_wide_for_the_terminal_is_folded_to_fit(
    rows: list[list[str]], width: int
) -> None:
    """Room for every column's longest word: every line fits and no word is broken."""
    table = AlignedTable(("id", "what", "where", "notes"))
    table.add_row("SP-00001-W", "enamel powder from the labial face", "freezer 2", "x " * 40)
    for number, row in enumerate(rows):
        table.add_row(f"PW-{number:05d}-X", *row)
    lines = printed(table, width)
    assert all(len(line) <= width for line in lines), lines
    words = {w for line in lines for w in line.split()}
    wanted = {w for row in rows for cell in row for w in cell.split()}
    assert {"SP-00001-W", "enamel", "labial", "freezer"} | wanted <= words


def test_a_row_of_the_wrong_length_is_refused() -> None:
    table = AlignedTable(("a", "b"))
    try:
        table.add_row("only one")
    except ValueError as error:
        assert "1 cells under 2 headers" in str(error)
    else:
        raise AssertionError("a short row was taken")


@settings(max_examples=300, deadline=None)
@given(st.text(alphabet=st.characters(blacklist_categories=("Cc", "Cs")), max_size=12))
def test_a_cell_is_measured_as_rich_measures_it(text: str) -> None:
    # rich's cell_len is the reference for the width a terminal gives a character (wide
    # East Asian characters take two cells, combining marks none); ASCII is counted by len.
    assert cell_width(text) == cell_len(text)
