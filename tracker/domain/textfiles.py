"""Text that arrives in files from elsewhere: checked before any parser sees it.

Instrument exports, batch sheets, reference curves, mapping profiles and label stocks
are written by other programs and other people. Before a CSV, TOML or JSON parser
reads one, this module refuses what would make the parser fail obscurely or take the
machine down — a wrong encoding, a NUL byte, a line of a hundred megabytes, a file
far too large, structures nested thousands deep — and says where: the row (line)
and the column (the n-th cell of that line, counting the delimiter).
"""

from __future__ import annotations

import codecs
import json
import tomllib
from dataclasses import dataclass
from typing import Any

# Far above any real instrument export or sheet (common practice: a day of
# MC-ICP-MS runs exports to well under 10 MB), far below what would exhaust memory.
MAX_TABLE_BYTES = 128 * 1024 * 1024
MAX_LINE_CHARS = 1024 * 1024
MAX_SETTINGS_BYTES = 1024 * 1024  # profiles, stock files, anchors: a few kilobytes
_BOMS = (
    (codecs.BOM_UTF32_LE, "UTF-32"),
    (codecs.BOM_UTF32_BE, "UTF-32"),
    (codecs.BOM_UTF16_LE, "UTF-16"),
    (codecs.BOM_UTF16_BE, "UTF-16"),
)


@dataclass(frozen=True)
class FileProblem(Exception):
    """Where in a file it goes wrong (row = line, 1-based; column = cell or key) and why."""

    row: int
    column: str
    reason: str

    def __str__(self) -> str:
        return f"row {self.row}, column {self.column}: {self.reason}"


def _place(content: bytes, offset: int, delimiter: bytes) -> tuple[int, str]:
    """Row and cell number of a byte offset, counting lines and delimiters before it."""
    start = content.rfind(b"\n", 0, offset) + 1
    row = content.count(b"\n", 0, offset) + 1
    return row, str(content.count(delimiter, start, offset) + 1)


def check_size(content: bytes, limit: int) -> None:
    if len(content) > limit:
        raise FileProblem(
            1, "1", f"is {len(content):,} bytes; files over {limit:,} bytes are refused"
        )


def decode_text(
    content: bytes, delimiter: str = ",", limit: int = MAX_TABLE_BYTES, encoding: str = "utf-8"
) -> str:
    """UTF-8 text (a BOM allowed) or a FileProblem saying what the bytes are instead.

    Another ``encoding`` (a single-byte one a file declares, such as ISO-8859-1) is
    decoded with the same checks; the problem then names that encoding.
    """
    check_size(content, limit)
    sep = delimiter.encode()
    for bom, name in _BOMS:
        if content.startswith(bom):
            raise FileProblem(1, "1", f"is {name} text; save it as UTF-8")
    nul = content.find(b"\x00")
    if nul >= 0:
        row, cell = _place(content, nul, sep)
        raise FileProblem(row, cell, "holds a NUL byte: a binary file, or not UTF-8 text")
    _check_lines(content, sep)
    utf8 = codecs.lookup(encoding).name == "utf-8"
    try:
        return content.decode("utf-8-sig" if utf8 else encoding)
    except UnicodeDecodeError as exc:
        row, cell = _place(content, exc.start, sep)
        said = "UTF-8" if utf8 else encoding
        raise FileProblem(
            row, cell, f"byte 0x{content[exc.start]:02X} is not {said}; save the file as UTF-8"
        ) from None


def _check_lines(content: bytes, sep: bytes) -> None:
    """Refuse the first line longer than MAX_LINE_CHARS bytes, in a few hundred C-speed finds.

    A line longer than the limit holds a whole aligned block of half the limit without a
    line feed, so only such blocks need measuring — not every line of the file.
    """
    block = MAX_LINE_CHARS // 2
    position = 0
    while position < len(content):
        if content.find(b"\n", position, position + block) >= 0:
            position += block
            continue
        start = content.rfind(b"\n", 0, position) + 1
        end = content.find(b"\n", position)
        end = len(content) if end < 0 else end
        if end - start > MAX_LINE_CHARS:
            row = content.count(b"\n", 0, start) + 1
            cell = content.count(sep, start, start + MAX_LINE_CHARS) + 1
            raise FileProblem(
                row,
                str(cell),
                f"the line is {end - start:,} bytes long; lines over {MAX_LINE_CHARS:,} "
                "are refused",
            )
        position = end + 1


def load_settings(content: bytes, suffix: str) -> dict[str, Any]:
    """A small TOML (``.toml``) or JSON document whose top level is a table."""
    text = decode_text(content, limit=MAX_SETTINGS_BYTES)
    try:
        data = tomllib.loads(text) if suffix == ".toml" else json.loads(text)
    except tomllib.TOMLDecodeError as exc:
        row, column = _toml_place(str(exc))
        raise FileProblem(row, column, f"is not valid TOML: {exc}") from None
    except json.JSONDecodeError as exc:
        raise FileProblem(exc.lineno, str(exc.colno), f"is not valid JSON: {exc.msg}") from None
    except RecursionError:
        raise FileProblem(1, "1", "nests tables or lists too deeply for a settings file") from None
    if not isinstance(data, dict):
        raise FileProblem(1, "1", "must hold a table of settings at its top level")
    return data


def _toml_place(message: str) -> tuple[int, str]:
    """tomllib says "(at line 3, column 7)" in its message; read the place from there."""
    marker = message.rfind("(at line ")
    if marker < 0:
        return 1, "1"
    parts = message[marker + 9 :].rstrip(")").split(", column ")
    try:
        return int(parts[0]), parts[1] if len(parts) > 1 else "1"
    except ValueError:
        return 1, "1"
