"""XLSX workbooks measured before openpyxl unpacks them, then read one row at a time.

A workbook is a ZIP of XML parts. What it would cost to open is decided by parts a
person never sees: the ZIP directory declares how large every part unpacks (a "zip
bomb" declares gigabytes), and the shared-strings part holds every distinct text of
every sheet, which openpyxl loads whole before the first row. Both are measured here
first — the directory as it is declared, the shared strings by a streaming count with
no tree built — and a workbook over a cap is refused naming it. Rows are then read
with openpyxl's read-only mode, one at a time.
"""

from __future__ import annotations

import io
import zipfile
from collections.abc import Iterator
from datetime import date, datetime, time
from typing import IO
from xml.parsers import expat

from tracker.domain.formula_cells import FORMULA_MARK
from tracker.domain.spreadsheets import TableError
from tracker.domain.textfiles import MAX_TABLE_BYTES, FileProblem, check_size

MAX_WORKBOOK_MEMBERS = 1_000
# What a workbook may unpack to (its ZIP directory's declared sizes, which zipfile enforces).
MAX_UNPACKED_BYTES = 256 * 1024 * 1024
# The shared-strings table: openpyxl keeps every entry as a Python string (about 150
# bytes each while it reads them) whatever sheet is imported. A table tracker accepts
# holds at most 2,000,000 cells, and a real list repeats its texts (taxa, localities):
# a million distinct texts, and 16 Mi characters among them, is far beyond one.
MAX_SHARED_STRINGS = 1_000_000
MAX_SHARED_CHARS = 16 * 1024 * 1024
# [Content_Types].xml names the parts; a real one is a few kilobytes.
_MAX_CONTENT_TYPES_BYTES = 1024 * 1024
_SHARED_STRINGS_TYPE = (  # as ECMA-376 names the part's content type
    "application/vnd.openxmlformats-officedocument.spreadsheetml.sharedStrings+xml"
)
_CHUNK = 64 * 1024


def sheet_lines(content: bytes, sheet: str | None) -> Iterator[tuple[int, list[str]]]:
    """Each row of the sheet (the first unless named) as its number and cell texts."""
    from openpyxl import load_workbook  # imported lazily: only XLSX imports need it

    _check_workbook(content)
    try:
        # data_only=False: a formula cell reads as its formula, so it is seen (and refused
        # or flagged) instead of silently taking whatever value the file cached for it
        book = load_workbook(io.BytesIO(content), read_only=True, data_only=False)
    except Exception as exc:  # openpyxl fails on a broken workbook in many ways; name it once
        raise _unreadable(exc) from None
    try:
        if sheet is not None and sheet not in book.sheetnames:
            raise TableError(
                1, "sheet", f"no sheet named {sheet!r}; it has {', '.join(book.sheetnames)}"
            )
        page = book[sheet] if sheet else book.worksheets[0]
        page.reset_dimensions()  # the file's own claim of its size is not trusted
        rows = enumerate(page.iter_rows(), start=1)
        while True:
            try:
                number, values = next(rows)
            except StopIteration:
                return
            except TableError:
                raise
            except Exception as exc:  # a sheet's XML broken part-way through
                raise _unreadable(exc) from None
            yield number, [_cell_text(c.value, c.data_type == "f") for c in values]
    finally:
        book.close()


def _check_workbook(content: bytes) -> None:
    """Read the ZIP directory and count the shared strings, before openpyxl reads either."""
    try:
        check_size(content, MAX_TABLE_BYTES)
    except FileProblem as problem:
        raise TableError(problem.row, "file", problem.reason) from None
    try:
        with zipfile.ZipFile(io.BytesIO(content)) as archive:
            _check_directory(archive.infolist())
            part = _shared_strings_part(archive)
            if part is not None:
                with archive.open(part) as stream:
                    _count_shared_strings(stream)
    except TableError:
        raise
    except (zipfile.BadZipFile, ValueError, OSError, EOFError, KeyError) as exc:
        raise _unreadable(exc) from None


def _check_directory(members: list[zipfile.ZipInfo]) -> None:
    if len(members) > MAX_WORKBOOK_MEMBERS:
        raise TableError(1, "file", f"holds {len(members)} parts; not a workbook to import")
    unpacked = sum(m.file_size for m in members)
    if unpacked > MAX_UNPACKED_BYTES:
        raise TableError(
            1,
            "file",
            f"would unpack to {unpacked:,} bytes (more than {MAX_UNPACKED_BYTES:,}): refused",
        )


def _shared_strings_part(archive: zipfile.ZipFile) -> str | None:
    """The shared-strings part as openpyxl finds it: named in [Content_Types].xml."""
    try:
        info = archive.getinfo("[Content_Types].xml")
    except KeyError:
        return None  # openpyxl refuses such a file itself
    if info.file_size > _MAX_CONTENT_TYPES_BYTES:
        raise TableError(1, "file", "is not a readable XLSX workbook (its part list is too large)")
    found: list[str] = []

    def start(name: str, attributes: dict[str, str]) -> None:
        if name.endswith("Override") and attributes.get("ContentType") == _SHARED_STRINGS_TYPE:
            found.append(attributes.get("PartName", "").lstrip("/"))

    parser = _parser()
    parser.StartElementHandler = start
    _parse(parser, io.BytesIO(archive.read(info)))
    return found[0] if found else None


def _count_shared_strings(stream: IO[bytes]) -> None:
    """Count the shared strings and their characters as the XML streams past; refuse at a cap.

    Expat reports each entry's start and its text in pieces: nothing is kept but the counts.
    """
    count = chars = depth = 0

    def start(name: str, attributes: dict[str, str]) -> None:
        nonlocal count, depth
        if depth or name.endswith("}si"):
            depth += 1
        if depth == 1 and name.endswith("}si"):
            count += 1
            if count > MAX_SHARED_STRINGS:
                raise TableError(
                    1,
                    "file",
                    f"its shared-strings table (the texts its cells point to) holds more than "
                    f"{MAX_SHARED_STRINGS:,} entries; workbooks are capped at "
                    f"{MAX_SHARED_STRINGS:,} shared strings: split it into smaller files",
                )

    def end(name: str) -> None:
        nonlocal depth
        depth = max(depth - 1, 0)

    def text(data: str) -> None:
        nonlocal chars
        if depth:
            chars += len(data)
            if chars > MAX_SHARED_CHARS:
                raise TableError(
                    1,
                    "file",
                    f"its shared strings reach {chars:,} characters by entry {count:,}; "
                    f"workbooks are capped at {MAX_SHARED_CHARS:,} characters of shared "
                    "strings: split it into smaller files",
                )

    parser = _parser()
    parser.StartElementHandler = start
    parser.EndElementHandler = end
    parser.CharacterDataHandler = text
    _parse(parser, stream)


def _parser() -> expat.XMLParserType:
    """An expat parser that refuses any DTD: a workbook part never needs one, and a DTD is how
    an entity that expands to gigabytes ("billion laughs") is declared."""
    parser = expat.ParserCreate(namespace_separator="}")

    def refuse(*_: object) -> None:
        raise TableError(1, "file", "is not a readable XLSX workbook (a part declares a DTD)")

    parser.StartDoctypeDeclHandler = refuse
    return parser


def _parse(parser: expat.XMLParserType, stream: IO[bytes]) -> None:
    try:
        while chunk := stream.read(_CHUNK):
            parser.Parse(chunk, False)
        parser.Parse(b"", True)
    except expat.ExpatError as exc:
        raise _unreadable(exc) from None


def _unreadable(exc: Exception) -> TableError:
    return TableError(1, "file", f"is not a readable XLSX workbook ({_short(exc)})")


def _cell_text(value: object, formula: bool) -> str:
    """A workbook cell as the text a CSV export of it would hold (dates in ISO 8601).

    A formula cell is its formula after FORMULA_MARK, so that no reader takes it for text.
    """
    if formula:
        return FORMULA_MARK + str(value)
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
