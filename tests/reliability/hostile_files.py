"""Malformed and hostile files, built in the test: wrong encodings, NUL bytes, huge lines,
formulas, zip bombs, broken workbooks, deeply nested settings.

Each builder writes one file and returns its path. Nothing here is real data.
"""

from __future__ import annotations

import codecs
import io
import random
import struct
import zipfile
from collections.abc import Callable, Sequence
from pathlib import Path

from openpyxl import Workbook

GOOD_EXPORT = "Run,Name,r4440\n1,STD-X,2.1\n2,STD-X,2.1\n3,STD-X,2.1\n"
Builder = Callable[[Path], Path]


def write(path: Path, data: bytes) -> Path:
    path.write_bytes(data)
    return path


# ---------------------------------------------------------------- text


def utf16(text: str) -> bytes:
    return codecs.BOM_UTF16_LE + text.encode("utf-16-le")


def latin1_on_row(text: str, row: int) -> bytes:
    lines = text.splitlines()
    lines[row - 1] += ",Ågård"  # é and å as single Latin-1 bytes
    return "\n".join(lines).encode("latin-1")


def nul_on_row(text: str, row: int) -> bytes:
    lines = text.encode().splitlines()
    lines[row - 1] = lines[row - 1][:3] + b"\x00" + lines[row - 1][3:]
    return b"\n".join(lines)


def huge_line(header: str, size: int = 100 * 1024 * 1024) -> bytes:
    """A header, then one line of ``size`` bytes (100 MB by default) without a line feed."""
    return header.encode() + b"\n" + b"7" * size + b"\n"


def random_bytes(n: int = 4096, seed: int = 8) -> bytes:
    return random.Random(seed).randbytes(n)


# ---------------------------------------------------------------- workbooks


def workbook(rows: Sequence[Sequence[object]], sheet: str = "Sheet1") -> bytes:
    book = Workbook()
    page = book.active
    assert page is not None
    page.title = sheet
    for row in rows:
        page.append(row)
    out = io.BytesIO()
    book.save(out)
    return out.getvalue()


def good_workbook() -> bytes:
    return workbook([["Run", "Name", "r4440"], [1, "STD-X", 2.1], [2, "STD-X", 2.1]])


def _rebuild(base: bytes, replace: dict[str, bytes | Callable[[zipfile.ZipFile], None]]) -> bytes:
    """Copy a workbook's parts, replacing the named ones (a callable writes its own part)."""
    out = io.BytesIO()
    with (
        zipfile.ZipFile(io.BytesIO(base)) as source,
        zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as target,
    ):
        for info in source.infolist():
            if info.filename not in replace:
                target.writestr(info, source.read(info))
        for name, content in replace.items():
            if callable(content):
                content(target)
            else:
                target.writestr(name, content)
    return out.getvalue()


SHEET = "xl/worksheets/sheet1.xml"


def _inflating(
    name: str, unpacked: int, head: bytes, tail: bytes
) -> Callable[[zipfile.ZipFile], None]:
    """A part that really inflates to ``unpacked`` bytes of blanks between head and tail."""

    def part(target: zipfile.ZipFile) -> None:
        info = zipfile.ZipInfo(name)
        info.compress_type = zipfile.ZIP_DEFLATED
        with target.open(info, "w", force_zip64=True) as handle:
            handle.write(head)
            block = b" " * (1024 * 1024)
            for _ in range(unpacked // len(block)):
                handle.write(block)
            handle.write(tail)

    return part


def zip_bomb(unpacked: int = 300 * 1024 * 1024) -> bytes:
    """A workbook whose sheet really inflates to ``unpacked`` bytes (declared honestly)."""
    head, tail = b'<?xml version="1.0"?><worksheet><sheetData>', b"</sheetData></worksheet>"
    return _rebuild(good_workbook(), {SHEET: _inflating(SHEET, unpacked, head, tail)})


def lying_zip(base: bytes | None = None, part: str = SHEET) -> bytes:
    """A workbook whose sheet (or another ZIP's ``part``) declares 100 bytes but inflates
    to 10 MB (sizes patched).

    ZIP layout (PKWARE APPNOTE 4.3.7, 4.3.12): a local header "PK\\3\\4" has the
    uncompressed size at offset 22 and the name length at 26, the name at 30; a central
    directory entry "PK\\1\\2" has them at 24, 28 and 46.
    """
    spoiled: dict[str, bytes | Callable[[zipfile.ZipFile], None]] = {
        part: b"<worksheet>" + b" " * 10_000_000
    }
    data = bytearray(_rebuild(good_workbook() if base is None else base, spoiled))
    for marker, size_at, length_at, name_at in (
        (b"PK\x03\x04", 22, 26, 30),
        (b"PK\x01\x02", 24, 28, 46),
    ):
        found = data.find(marker)
        while found >= 0:
            (length,) = struct.unpack_from("<H", data, found + length_at)
            name = bytes(data[found + name_at : found + name_at + length])
            if name == part.encode():
                struct.pack_into("<I", data, found + size_at, 100)
            found = data.find(marker, found + 4)
    return bytes(data)


def _entities(levels: int = 9) -> bytes:
    """The "billion laughs" DTD: each entity is ten of the one before (10⁹ "lol"s at 9)."""
    parts = [b'<!ENTITY lol0 "lol">']
    parts += [f'<!ENTITY lol{i} "{f"&lol{i - 1};" * 10}">'.encode() for i in range(1, levels + 1)]
    return b"<!DOCTYPE worksheet [" + b"".join(parts) + b"]>"


def billion_laughs() -> bytes:
    """A sheet whose first cell expands to 10⁹ × "lol" (3 GB) if entities are expanded."""
    xml = (
        b'<?xml version="1.0"?>'
        + _entities()
        + b'<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
        b'<sheetData><row r="1"><c r="A1" t="inlineStr"><is><t>&lol9;</t></is></c></row>'
        b"</sheetData></worksheet>"
    )
    return _rebuild(good_workbook(), {SHEET: xml})


def far_corner() -> bytes:
    """One cell at the last row and column a workbook can have (XFD1048576)."""
    xml = (
        b'<?xml version="1.0"?><worksheet xmlns="http://schemas.openxmlformats.org/'
        b'spreadsheetml/2006/main"><dimension ref="A1:XFD1048576"/><sheetData>'
        b'<row r="1"><c r="A1" t="inlineStr"><is><t>Run</t></is></c></row>'
        b'<row r="1048576"><c r="XFD1048576" t="inlineStr"><is><t>x</t></is></c></row>'
        b"</sheetData></worksheet>"
    )
    return _rebuild(good_workbook(), {SHEET: xml})


def wide_row(columns: int = 5000) -> bytes:
    return workbook([[f"c{i}" for i in range(columns)]])


def formula_without_value() -> bytes:
    """A formula saved by a program that never calculated it: no cached value to read."""
    return workbook([["Run", "Name", "r4440"], [1, "STD-X", "=2.1*1"], [2, "STD-X", 2.1]])


def truncated_workbook() -> bytes:
    data = good_workbook()
    return data[: len(data) // 2]


def not_a_zip() -> bytes:
    return b"PK\x03\x04" + random_bytes(2000)


# ---------------------------------------------------------------- settings files


def deep_json(depth: int = 100_000) -> bytes:
    return ('{"a":' * depth + "1" + "}" * depth).encode()


def deep_toml(depth: int = 100_000) -> bytes:
    return ("x = " + "[" * depth + "]" * depth + "\n").encode()


# ---------------------------------------------------------------- Darwin Core Archives

CORE = "occurrence.txt"


def dwc_archive(location: str = CORE, doctype: bytes = b"") -> bytes:
    """A small Darwin Core Archive (TDWG Text Guide shape) of invented rows."""
    meta = (
        b'<?xml version="1.0"?>' + doctype + b'<archive xmlns="http://rs.tdwg.org/dwc/text/">'
        b'<core fieldsTerminatedBy="\\t" fieldsEnclosedBy="" ignoreHeaderLines="1">'
        b"<files><location>" + location.encode() + b"</location></files>"
        b'<field index="0" term="http://rs.tdwg.org/dwc/terms/catalogNumber"/>'
        b"</core></archive>"
    )
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as target:
        target.writestr("meta.xml", meta)
        target.writestr(CORE, "catalogNumber\nINV 1\nINV 2\n")
    return out.getvalue()


def archive_bomb(unpacked: int = 300 * 1024 * 1024) -> bytes:
    """An archive whose core file really inflates to ``unpacked`` bytes."""
    core = _inflating(CORE, unpacked, b"catalogNumber\nINV 1", b"\n")
    return _rebuild(dwc_archive(), {CORE: core})


def archive_laughs() -> bytes:
    """An archive whose meta.xml declares the billion-laughs entities."""
    return dwc_archive(doctype=_entities())


def archive_escape() -> bytes:
    """An archive whose meta.xml points outside the archive."""
    return dwc_archive(location="../../outside/occurrence.txt")


def zip_without_meta() -> bytes:
    """A ZIP of a lender's list, with no meta.xml."""
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as target:
        target.writestr("lender-list.csv", "catalogNumber\nINV 1\n")
    return out.getvalue()
