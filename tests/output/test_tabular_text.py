"""Spreadsheet writers and stored text with control characters: XLSX never fails, CSV is exact.

The reference for what a workbook cannot hold is openpyxl's own ``ILLEGAL_CHARACTERS_RE``
(what it refuses with ``IllegalCharacterError``) plus U+FFFE and U+FFFF, which XML 1.0
excludes (XML 1.0 §2.2 Char, from memory) and which openpyxl writes into a workbook that
no reader then opens.
"""

from __future__ import annotations

import csv
import io

from openpyxl import load_workbook
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

from tracker.output.tabular import csv_bytes, xlsx_bytes

EVERY_CONTROL = [chr(c) for c in [*range(0x00, 0x20), 0x7F, *range(0x80, 0xA0)]]
NOT_XML = ["\ufffe", "\uffff"]


def written(char: str) -> str:
    """What a reader of the workbook should find for ``a{char}b``."""
    if ILLEGAL_CHARACTERS_RE.match(char) or char in NOT_XML:
        return f"a<U+{ord(char):04X}>b"
    if char == "\r":
        return "a\nb"  # XML reads every line end as a line feed
    return f"a{char}b"


def test_every_c0_and_c1_character_is_written_to_xlsx_and_read_back() -> None:
    chars = [*EVERY_CONTROL, *NOT_XML, "\u202e", "\u200b"]
    rows = [{"name": f"a{char}b", "n": index} for index, char in enumerate(chars)]
    book = load_workbook(io.BytesIO(xlsx_bytes(["name", "n"], rows, "hostile")))
    cells = [row[0] for row in book.active.iter_rows(min_row=2, values_only=True)]
    assert cells == [written(char) for char in chars]
    refused = [c for c in chars if ILLEGAL_CHARACTERS_RE.match(c)]
    assert len(refused) == 29  # C0 less tab, line feed and carriage return


def test_csv_keeps_every_control_character_exactly() -> None:
    rows = [{"name": f"a{char}b"} for char in [*EVERY_CONTROL, "\u202e", "\ufeff"]]
    text = csv_bytes(["name"], rows).decode("utf-8").removeprefix("\ufeff")
    read = [row[0] for row in csv.reader(io.StringIO(text, newline=""))][1:]
    assert read == [row["name"] for row in rows]
