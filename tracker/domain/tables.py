"""Reading a table someone exported (CSV, TSV or XLSX bytes) into numbered rows.

Pure: bytes in, rows out. Every row keeps its number in the file (1 = first line) so
that an error can name "row 14, column 44Ca/40Ca" exactly as a person sees it in a
spreadsheet. Comment lines (instrument preambles) and blank lines are skipped.

The bytes come from elsewhere, so nothing here trusts them: text is checked first
(:mod:`tracker.domain.textfiles`), a workbook's ZIP directory is read before any
XML is unpacked (a "zip bomb" declares gigabytes), rows and columns are counted as
they come, and a cell that holds a spreadsheet formula is refused rather than kept
as text a spreadsheet would later run. Every failure is a :class:`TableError`.
"""

from __future__ import annotations

import csv
import io
import zipfile
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from datetime import date, datetime, time

from tracker.domain.spreadsheet import looks_like_formula
from tracker.domain.textfiles import MAX_TABLE_BYTES, FileProblem, check_size, decode_text

MAX_ROWS = 500_000
MAX_COLUMNS = 1_000
MAX_WORKBOOK_MEMBERS = 1_000
# What a workbook may unpack to (its ZIP directory's declared sizes, which zipfile enforces).
MAX_UNPACKED_BYTES = 256 * 1024 * 1024


class TableError(ValueError):
    def __init__(self, row: int, column: str, reason: str) -> None:
        super().__init__(f"row {row}, column {column}: {reason}")
        self.row, self.column, self.reason = row, column, reason


@dataclass(frozen=True)
class Row:
    number: int  # line or sheet row in the file, 1-based
    cells: dict[str, str]


def read_table(
    content: bytes,
    fmt: str,
    *,
    header_row: int = 1,
    sheet: str | None = None,
    comment_prefix: str | None = "#",
    keep_formulas: bool = False,
) -> tuple[list[str], list[Row]]:
    """(header, rows) from the file; the header is the ``header_row``-th kept line.

    A cell a spreadsheet would run as a formula is refused, unless ``keep_formulas``
    (for a caller that reports such cells row by row itself).
    """
    zipped = content[:4] == b"PK\x03\x04"  # XLSX files are ZIP archives
    if fmt == "xlsx" and not zipped:
        raise TableError(1, "file", "is not an XLSX workbook; use a csv or tsv profile")
    if fmt != "xlsx" and zipped:
        raise TableError(1, "file", "looks like an XLSX workbook; use a profile with format xlsx")
    lines = _xlsx_lines(content, sheet) if fmt == "xlsx" else _text_lines(content, fmt)
    # _counted strips every cell and drops trailing blank ones: a line left empty was blank
    kept = [
        (n, cells)
        for n, cells in lines
        if cells and not (comment_prefix and cells[0].startswith(comment_prefix))
    ]
    if len(kept) < header_row:
        raise TableError(header_row, "header", "the file has no header row there")
    header_number, header = kept[header_row - 1]
    if len(set(header)) != len(header):
        raise TableError(header_number, "header", "two columns have the same name")
    rows = [_row(number, cells, header) for number, cells in kept[header_row:]]
    for row in [] if keep_formulas else rows:
        _refuse_formulas(row, header)
    return header, rows


def _row(number: int, cells: list[str], header: list[str]) -> Row:
    """One line's cells under their headings; a line shorter than the header ends in blanks."""
    width = len(header)
    if len(cells) > width:  # never drop a cell silently (trailing blanks are gone)
        raise TableError(
            number,
            str(width + 1),
            f"the row has {len(cells)} cells but the header names {width} columns "
            "(an unquoted comma?)",
        )
    if len(cells) < width:
        cells = cells + [""] * (width - len(cells))
    return Row(number, dict(zip(header, cells, strict=True)))


def column_name(header: list[str], column: str) -> str:
    """A column as a refusal names it: its heading, or its place when it has none."""
    return column or f"{header.index(column) + 1} (no heading)"


def _refuse_formulas(row: Row, header: list[str]) -> None:
    for column, text in row.cells.items():
        if looks_like_formula(text):
            raise TableError(
                row.number,
                column_name(header, column),
                f"holds a spreadsheet formula ({text[:20]!r}); export values, not formulas",
            )


def _text_lines(content: bytes, fmt: str) -> list[tuple[int, list[str]]]:
    delimiter = "\t" if fmt == "tsv" else ","
    try:
        text = decode_text(content, delimiter)
    except FileProblem as problem:
        raise TableError(problem.row, problem.column, problem.reason) from None
    return _counted(csv_records(text, delimiter))


def csv_records(text: str, delimiter: str = ",") -> Iterator[tuple[int, list[str]]]:
    """Each CSV record with the line it starts on (a quoted cell may span lines).

    Strict: a quote left open would otherwise swallow every line after it into one
    cell, silently; here it is refused at the line and cell where it opens.
    """
    reader = csv.reader(io.StringIO(text), delimiter=delimiter, strict=True)
    start = 1
    try:
        for cells in reader:
            yield start, cells
            start = reader.line_num + 1
    except csv.Error as exc:
        line = text.splitlines()[start - 1] if start <= text.count("\n") + 1 else ""
        quote = line.find('"')
        cell = line[: max(quote, 0)].count(delimiter) + 1
        raise TableError(start, str(cell), f"cannot be read as CSV: {exc}") from None


def _counted(lines: Iterable[tuple[int, list[str]]]) -> list[tuple[int, list[str]]]:
    """The lines, refused beyond MAX_ROWS rows or MAX_COLUMNS cells.

    Every cell comes back stripped of surrounding blanks, and blank cells at the end of
    a line are dropped (so a blank line comes back empty).
    """
    kept = []
    for number, cells in lines:
        if number > MAX_ROWS:
            raise TableError(number, "1", f"the table is longer than {MAX_ROWS:,} rows")
        cells = list(map(str.strip, cells))
        while cells and not cells[-1]:
            cells.pop()
        if len(cells) > MAX_COLUMNS:
            raise TableError(number, str(MAX_COLUMNS + 1), f"more than {MAX_COLUMNS} columns")
        kept.append((number, cells))
    return kept


def _check_workbook(content: bytes) -> None:
    """Read the ZIP directory only: refuse a workbook that would unpack to too much."""
    try:
        check_size(content, MAX_TABLE_BYTES)
    except FileProblem as problem:
        raise TableError(problem.row, "file", problem.reason) from None
    try:
        with zipfile.ZipFile(io.BytesIO(content)) as archive:
            members = archive.infolist()
    except (zipfile.BadZipFile, ValueError, OSError, EOFError) as exc:
        raise TableError(1, "file", f"is not a readable XLSX workbook ({exc})") from None
    if len(members) > MAX_WORKBOOK_MEMBERS:
        raise TableError(1, "file", f"holds {len(members)} parts; not a workbook to import")
    unpacked = sum(m.file_size for m in members)
    if unpacked > MAX_UNPACKED_BYTES:
        raise TableError(
            1,
            "file",
            f"would unpack to {unpacked:,} bytes (more than {MAX_UNPACKED_BYTES:,}): refused",
        )


def _xlsx_lines(content: bytes, sheet: str | None) -> list[tuple[int, list[str]]]:
    from openpyxl import load_workbook  # imported lazily: only XLSX imports need it

    _check_workbook(content)
    try:
        # data_only=False: a formula cell reads as its formula, so it is seen (and refused
        # or flagged) instead of silently taking whatever value the file cached for it
        book = load_workbook(io.BytesIO(content), read_only=True, data_only=False)
    except Exception as exc:  # openpyxl fails on a broken workbook in many ways; name it once
        raise TableError(1, "file", f"is not a readable XLSX workbook ({_short(exc)})") from None
    try:
        if sheet is not None and sheet not in book.sheetnames:
            raise TableError(
                1, "sheet", f"no sheet named {sheet!r}; it has {', '.join(book.sheetnames)}"
            )
        page = book[sheet] if sheet else book.worksheets[0]
        page.reset_dimensions()  # the file's own claim of its size is not trusted
        return _counted(
            (n, [_cell_text(v) for v in values])
            for n, values in enumerate(page.iter_rows(values_only=True), start=1)
        )
    except TableError:
        raise
    except Exception as exc:  # a sheet's XML broken part-way through
        raise TableError(1, "file", f"is not a readable XLSX workbook ({_short(exc)})") from None
    finally:
        book.close()


def _cell_text(value: object) -> str:
    """A workbook cell as the text a CSV export of it would hold (dates in ISO 8601)."""
    if value is None:
        return ""
    if isinstance(value, float):
        return repr(value)
    if isinstance(value, datetime):
        has_time = value.time() != time(0, 0) or value.tzinfo is not None
        return value.isoformat() if has_time else value.date().isoformat()
    if isinstance(value, date | time):
        return value.isoformat()
    return str(value)


def _short(exc: Exception) -> str:
    text = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
    return text[:120]
