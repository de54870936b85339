"""CSV and XLSX writers that never hand a spreadsheet a formula to run.

Every text cell passes through :func:`tracker.domain.spreadsheet.neutralise`; numbers
stay numbers. XLSX cells are written as explicit strings or numbers, never as formulas.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Sequence
from typing import Any

from tracker.domain.spreadsheet import neutralise


def _cell(value: Any) -> Any:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int | float):
        return value
    return neutralise(str(value))


def csv_bytes(columns: Sequence[str], rows: Sequence[dict[str, Any]]) -> bytes:
    """UTF-8 CSV (with a BOM so spreadsheets read the µ, ‰ and δ right)."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\r\n")
    writer.writerow(columns)
    for row in rows:
        writer.writerow([_cell(row.get(c)) for c in columns])
    return ("\ufeff" + buffer.getvalue()).encode("utf-8")


def xlsx_bytes(columns: Sequence[str], rows: Sequence[dict[str, Any]], sheet: str) -> bytes:
    from openpyxl import Workbook  # imported lazily: only XLSX exports need it

    book = Workbook(write_only=True)
    page = book.create_sheet(sheet[:31])
    page.append(list(columns))
    for row in rows:
        page.append([_cell(row.get(c)) for c in columns])
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()
