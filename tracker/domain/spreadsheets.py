"""Reading a table someone exported (CSV, TSV or XLSX bytes) into numbered rows.

Pure: bytes in, rows out. Every row keeps its number in the file (1 = first line) so
that an error can name "row 14, column 44Ca/40Ca" exactly as a person sees it in a
spreadsheet. Comment lines (instrument preambles) and blank lines are skipped.

The bytes come from elsewhere, so nothing here trusts them: text is checked first
(:mod:`tracker.domain.textfiles`), a workbook's parts are measured before openpyxl
unpacks them (:mod:`tracker.domain.workbooks`), rows, columns and cells are counted as
they come, and a cell that holds a spreadsheet formula is refused rather than kept as
text a spreadsheet would later run. Every failure is a :class:`TableError`.

Rows are read one at a time (:class:`Table`), so memory follows the file, not the file
times the cost of a Python object per cell; the caps below bound what one file may ask.
"""

from __future__ import annotations

import csv
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from typing import NamedTuple

from tracker.domain.formula_cells import FORMULA_MARK, is_formula_cell, looks_like_formula
from tracker.domain.textfiles import FileProblem, decode_text

MAX_ROWS = 500_000
MAX_COLUMNS = 1_000
# Cells in one file, counted as rows × the header's columns. A real lender list is at most
# tens of thousands of rows with dozens of columns (40,000 × 50 = 2,000,000), an instrument
# session's export a few thousand runs (common practice); beyond that a file is a mistake
# or an attack, and every consumer's work grows with it.
MAX_CELLS = 2_000_000


class TableError(ValueError):
    def __init__(self, row: int, column: str, reason: str) -> None:
        super().__init__(f"row {row}, column {column}: {reason}")
        self.row, self.column, self.reason = row, column, reason


@dataclass(frozen=True)
class Row:
    number: int  # line or sheet row in the file, 1-based
    cells: dict[str, str]


class Table(NamedTuple):
    """A file's header and its rows; the rows are read from the bytes as they are iterated.

    Nothing holds the whole file's rows: a consumer keeps what it needs of each row (its
    validated values) and lets the row go, so reading a file costs the file itself plus
    one row at a time. The rows can be iterated once; every check below (cells, columns,
    formulas) is made as each row comes, so a refusal can arrive part-way through.
    """

    header: list[str]
    rows: Iterator[Row]


def read_table(
    content: bytes,
    fmt: str,
    *,
    header_row: int = 1,
    sheet: str | None = None,
    comment_prefix: str | None = "#",
    keep_formulas: bool = False,
) -> Table:
    """The file's header (the ``header_row``-th kept line) and its rows, read lazily.

    A cell a spreadsheet would run as a formula is refused, unless ``keep_formulas``
    (for a caller that reports such cells row by row itself: a workbook's formula cell
    then reads as FORMULA_MARK and its formula, see `is_formula_cell`).
    """
    zipped = content[:4] == b"PK\x03\x04"  # XLSX files (and Darwin Core Archives) are ZIPs
    if fmt == "xlsx" and not zipped:
        raise TableError(1, "file", "is not an XLSX workbook; use a csv or tsv profile")
    if fmt != "xlsx" and zipped:
        from tracker.domain.dwca import zip_problem

        raise TableError(1, "file", zip_problem(content))
    if fmt == "xlsx":
        from tracker.domain.workbooks import sheet_lines  # openpyxl only for workbooks

        lines = sheet_lines(content, sheet)
    else:
        lines = _text_lines(content, fmt)
    # _counted strips every cell and drops trailing blank ones: a line left empty was blank
    kept = (
        (n, cells)
        for n, cells in _counted(lines)
        if cells and not (comment_prefix and cells[0].startswith(comment_prefix))
    )
    header_number, header = _header(kept, header_row)
    if len(set(header)) != len(header):
        raise TableError(header_number, "header", "two columns have the same name")
    return Table(header, _rows(kept, header, keep_formulas))


def described_table(
    header: list[str], lines: Iterable[tuple[int, list[str]]], *, keep_formulas: bool = False
) -> Table:
    """Rows under a header given from elsewhere (a Darwin Core Archive's meta.xml).

    The lines are counted, capped and checked as :func:`read_table` does its own.
    """
    kept = ((n, cells) for n, cells in _counted(lines) if cells)
    return Table(header, _rows(kept, header, keep_formulas))


def _header(kept: Iterator[tuple[int, list[str]]], header_row: int) -> tuple[int, list[str]]:
    found = None
    for _ in range(header_row):
        found = next(kept, None)
        if found is None:
            raise TableError(header_row, "header", "the file has no header row there")
    assert found is not None  # header_row is at least 1
    return found


def _rows(
    kept: Iterator[tuple[int, list[str]]], header: list[str], keep_formulas: bool
) -> Iterator[Row]:
    """Each line under the header as a Row, counting cells as a consumer sees them.

    A row counts as many cells as the header has columns (a shorter one is filled with
    blanks), so the cap bounds the work of every consumer, not only what the file spells.
    """
    cells_read = len(header)
    for number, cells in kept:
        cells_read += len(header)
        if cells_read > MAX_CELLS:
            raise TableError(
                number,
                "file",
                f"reaches {cells_read:,} cells by row {number:,} ({len(header):,} columns "
                f"under the header); files are capped at {MAX_CELLS:,} cells: "
                "split it into smaller files",
            )
        row = _row(number, cells, header)
        if not keep_formulas:
            _refuse_formulas(row, header)
        yield row


def _row(number: int, cells: list[str], header: list[str]) -> Row:
    """One line's cells under their headings; a line shorter than the header ends in blanks."""
    width = len(header)
    if len(cells) > width:  # never drop a cell silently (trailing blanks are gone)
        raise TableError(
            number,
            str(width + 1),
            f"the row has {len(cells)} cells but the header names {width} columns "
            "(a delimiter inside a cell, unquoted?)",
        )
    if len(cells) < width:
        cells = cells + [""] * (width - len(cells))
    return Row(number, dict(zip(header, cells, strict=True)))


def column_name(header: list[str], column: str) -> str:
    """A column as a refusal names it: its heading, or its place when it has none."""
    return column or f"{header.index(column) + 1} (no heading)"


def _refuse_formulas(row: Row, header: list[str]) -> None:
    for column, text in row.cells.items():
        if is_formula_cell(text) or looks_like_formula(text):
            shown = text.removeprefix(FORMULA_MARK)[:20]
            raise TableError(
                row.number,
                column_name(header, column),
                f"holds a spreadsheet formula ({shown!r}); export values, not formulas",
            )


def _text_lines(content: bytes, fmt: str) -> Iterator[tuple[int, list[str]]]:
    """A CSV's records, or a TSV's lines split at tabs (quotes are data in TSV)."""
    delimiter = "\t" if fmt == "tsv" else ","
    try:
        text = decode_text(content, delimiter)
    except FileProblem as problem:
        raise TableError(problem.row, problem.column, problem.reason) from None
    return csv_records(text, delimiter, None if fmt == "tsv" else '"')


def csv_records(
    text: str, delimiter: str = ",", quote: str | None = '"'
) -> Iterator[tuple[int, list[str]]]:
    """Each CSV record with the line it starts on (a quoted cell may span lines).

    Strict: a quote left open would otherwise swallow every line after it into one
    cell, silently; here it is refused at the line and cell where it opens. With no
    ``quote`` every character is data: TSV has no quoting (the IANA registration of
    text/tab-separated-values, from memory), nor an archive whose fieldsEnclosedBy is empty.
    """
    if quote is None:
        reader = csv.reader(_lines(text), delimiter=delimiter, quoting=csv.QUOTE_NONE)
    else:
        reader = csv.reader(_lines(text), delimiter=delimiter, quotechar=quote, strict=True)
    start = 1
    try:
        for cells in reader:
            yield start, cells
            start = reader.line_num + 1
    except csv.Error as exc:
        line = _line(text, start)
        opened = line.find(quote or '"')
        cell = line[: max(opened, 0)].count(delimiter) + 1
        raise TableError(start, str(cell), f"cannot be read as CSV: {exc}") from None


def _lines(text: str) -> Iterator[str]:
    """The text's lines, each with its line feed, one at a time.

    What io.StringIO would give, without its copy of the whole text at four bytes a
    character: only the line being parsed is copied out of the text.
    """
    start, size = 0, len(text)
    while start < size:
        end = text.find("\n", start)
        end = size if end < 0 else end + 1
        yield text[start:end]
        start = end


def _line(text: str, number: int) -> str:
    """The ``number``-th line of the text (1-based; empty past the end), without its line feed."""
    start = 0
    for _ in range(number - 1):
        start = text.find("\n", start) + 1
        if start == 0:
            return ""
    end = text.find("\n", start)
    return text[start : end if end >= 0 else len(text)]


def _counted(lines: Iterable[tuple[int, list[str]]]) -> Iterator[tuple[int, list[str]]]:
    """The lines, refused beyond MAX_ROWS rows or MAX_COLUMNS cells.

    Every cell comes back stripped of surrounding blanks, and blank cells at the end of
    a line are dropped (so a blank line comes back empty).
    """
    for number, cells in lines:
        if number > MAX_ROWS:
            raise TableError(number, "1", f"the table is longer than {MAX_ROWS:,} rows")
        cells = list(map(str.strip, cells))
        while cells and not cells[-1]:
            cells.pop()
        if len(cells) > MAX_COLUMNS:
            raise TableError(number, str(MAX_COLUMNS + 1), f"more than {MAX_COLUMNS} columns")
        yield number, cells
