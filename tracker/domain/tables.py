"""Reading an instrument's export table (CSV, TSV or XLSX bytes) into numbered rows.

Pure: bytes in, rows out. Every row keeps its number in the file (1 = first line) so
that an error can name "row 14, column 44Ca/40Ca" exactly as a person sees it in a
spreadsheet. Comment lines (instrument preambles) and blank lines are skipped.
"""

from __future__ import annotations

import csv
import io
import zipfile
from dataclasses import dataclass


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
) -> tuple[list[str], list[Row]]:
    """(header, rows) from the file; the header is the ``header_row``-th kept line."""
    zipped = content[:4] == b"PK\x03\x04"  # XLSX files are ZIP archives
    if fmt == "xlsx" and not zipped:
        raise TableError(1, "file", "is not an XLSX workbook; use a csv or tsv profile")
    if fmt != "xlsx" and zipped:
        raise TableError(1, "file", "looks like an XLSX workbook; use a profile with format xlsx")
    if fmt == "xlsx":
        lines = _xlsx_lines(content, sheet)
    else:
        try:
            text = content.decode("utf-8-sig")
        except UnicodeDecodeError as exc:
            raise TableError(
                1, "file", f"is not UTF-8 text (byte {exc.start}); save it as UTF-8 CSV"
            ) from None
        delimiter = "\t" if fmt == "tsv" else ","
        lines = list(enumerate(csv.reader(io.StringIO(text), delimiter=delimiter), start=1))
    kept = [
        (n, [c.strip() for c in cells])
        for n, cells in lines
        if any(c.strip() for c in cells)
        and not (comment_prefix and cells and cells[0].strip().startswith(comment_prefix))
    ]
    if len(kept) < header_row:
        raise TableError(header_row, "header", "the file has no header row there")
    header_number, header = kept[header_row - 1]
    if len(set(header)) != len(header):
        raise TableError(header_number, "header", "two columns have the same name")
    rows = [
        Row(n, dict(zip(header, cells + [""] * (len(header) - len(cells)), strict=False)))
        for n, cells in kept[header_row:]
    ]
    return header, rows


def _xlsx_lines(content: bytes, sheet: str | None) -> list[tuple[int, list[str]]]:
    from openpyxl import load_workbook  # imported lazily: only XLSX imports need it

    try:
        book = load_workbook(io.BytesIO(content), read_only=True, data_only=True)
    except (zipfile.BadZipFile, KeyError, ValueError, OSError) as exc:
        raise TableError(1, "file", f"is not a readable XLSX workbook ({exc})") from None
    try:
        if sheet is not None and sheet not in book.sheetnames:
            raise TableError(
                1, "sheet", f"no sheet named {sheet!r}; it has {', '.join(book.sheetnames)}"
            )
        page = book[sheet] if sheet else book.worksheets[0]
        return [
            (n, ["" if v is None else repr(v) if isinstance(v, float) else str(v) for v in values])
            for n, values in enumerate(page.iter_rows(values_only=True), start=1)
        ]
    finally:
        book.close()
