"""CSV and XLSX writers that never hand a spreadsheet a formula to run.

A CSV text cell passes through :func:`tracker.domain.formula_cells.neutralise` (a
leading apostrophe before text a spreadsheet would run); numbers stay numbers. An XLSX
text cell is written as a string cell (its type set to string explicitly, so openpyxl
never takes a leading = for a formula) holding the text exactly, with no apostrophe
added: a string cell is never run, and its value is what was typed.

Stored text can hold characters an older release let in (an ESC, a bidi override).
CSV keeps every character exactly: a CSV export is a copy of the data for another
program (a lender's database, a diff against the manifest), which must get the text as
it is stored; its control characters are inert in a spreadsheet, and the one thing a
spreadsheet would *run* — a formula — is already neutralised. An XLSX cell is XML text,
which cannot hold most C0 controls (openpyxl refuses them with an error, and a U+FFFE it
lets through leaves a workbook no reader opens): those are written visibly
(``<U+001B>``); everything else is kept (a carriage return is read back as a line
feed, as XML reads every line end).
"""

from __future__ import annotations

import csv
import io
import re
from collections.abc import Sequence
from decimal import Decimal
from typing import Any

from tracker.domain.base import decimal_text
from tracker.domain.formula_cells import neutralise
from tracker.domain.text_rules import marker

# Characters outside XML 1.0's Char production (XML 1.0 Fifth Edition §2.2, from memory:
# #x9 | #xA | #xD | [#x20-#xD7FF] | [#xE000-#xFFFD] | [#x10000-#x10FFFF]).
_NOT_XML_TEXT = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ud800-\udfff\ufffe\uffff]")


def _plain(value: Any) -> Any:
    """A value as a cell holds it: numbers as numbers, anything else as its text."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int | float | Decimal):
        return value
    return str(value)


def _csv_cell(value: Any) -> Any:
    """A CSV cell: an exact value as its digits (``str`` would write ``1E-7``), text neutralised."""
    cell = _plain(value)
    return decimal_text(cell) if isinstance(cell, Decimal) else neutralise(cell)


def csv_bytes(columns: Sequence[str], rows: Sequence[dict[str, Any]]) -> bytes:
    """UTF-8 CSV (with a BOM so spreadsheets read the µ, ‰ and δ right)."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\r\n")
    writer.writerow(columns)
    for row in rows:
        writer.writerow([_csv_cell(row.get(c)) for c in columns])
    return ("\ufeff" + buffer.getvalue()).encode("utf-8")


def _xlsx_cell(page: Any, value: Any) -> Any:
    """An XLSX cell: a number as a number, text as a string cell (never a formula)."""
    from openpyxl.cell import WriteOnlyCell

    cell = _plain(value)
    if not isinstance(cell, str):
        return cell
    if _NOT_XML_TEXT.search(cell):
        cell = _NOT_XML_TEXT.sub(lambda found: marker(found.group()), cell)
    written = WriteOnlyCell(page, value=cell)
    written.data_type = "s"  # openpyxl would take text starting with = for a formula
    return written


def xlsx_bytes(columns: Sequence[str], rows: Sequence[dict[str, Any]], sheet: str) -> bytes:
    """An XLSX workbook of one sheet; every stored string can be written (see above)."""
    from openpyxl import Workbook  # imported lazily: only XLSX exports need it

    book = Workbook(write_only=True)
    page = book.create_sheet(sheet[:31])
    page.append([_xlsx_cell(page, c) for c in columns])
    for row in rows:
        page.append([_xlsx_cell(page, row.get(c)) for c in columns])
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()
