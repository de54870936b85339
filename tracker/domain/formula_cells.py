"""Cells a spreadsheet would execute: detected on the way in, neutralised on the way out.

A text cell that begins with =, +, -, @, a tab or a carriage return may be run as a
formula when the file is opened in a spreadsheet (the "CSV injection" problem). Such
text is ordinary on the way in ("- 5 km N of the quarry", "@team") and kept as typed;
only a workbook's live formula cell (whose value the file does not hold) is reported.
On the way out a CSV cell of such text is prefixed with an apostrophe, which spreadsheets
show as text; an XLSX cell is written as a string cell instead. Numbers (-12.5, +3) are
left alone.
"""

from __future__ import annotations

import re

# What such a cell starts with: a bulk reader can skip the full test for any other cell.
FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r")
_NUMBER = re.compile(r"^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$")


# How a workbook's formula cell is read: its formula text after this mark. A workbook
# cannot hold U+0001 in its text (XML 1.0 allows no C0 control but tab, LF and CR), so
# the mark tells a live formula from text typed to start with "=" (a string cell).
FORMULA_MARK = "\x01"


def is_formula_cell(value: str) -> bool:
    """True for a workbook cell that was a formula (read as FORMULA_MARK + its formula)."""
    return value.startswith(FORMULA_MARK)


def looks_like_formula(value: str) -> bool:
    """True for text a spreadsheet could evaluate (not for plain signed numbers)."""
    return bool(value) and value.startswith(FORMULA_TRIGGERS) and not _NUMBER.match(value.strip())


def neutralise(value: object) -> object:
    """Make a cell safe to open in a spreadsheet; numbers and safe text pass unchanged."""
    if isinstance(value, str) and looks_like_formula(value):
        return "'" + value
    return value
