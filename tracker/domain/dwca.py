"""Darwin Core Archives: a lender's manifest as collections publish it.

The format is the TDWG Darwin Core Text Guide (rs.tdwg.org/dwc/terms/guides/text/): a ZIP
holding ``meta.xml``, one core data file, possibly extension files and ``eml.xml``.
``meta.xml`` says everything about the core file — where it is, its field delimiter
(``fieldsTerminatedBy``), quote (``fieldsEnclosedBy``, may be empty: no quoting), line end,
encoding, how many header lines to skip, and which term each column holds
(``<field index=".." term=".."/>``); a field with a ``default`` and no index is the same
value for every row. Headings therefore come from the terms, so a core file without a
header line reads as well as one with. Extensions are named, never imported.

Pure: bytes in, a :class:`~tracker.domain.spreadsheets.Table` out. Nothing in the ZIP is
trusted: members are measured before they are unpacked, a location that leaves the
archive is refused, and ``meta.xml`` is refused if it declares a DTD or entities (so no
external entity is ever fetched and no entity expands).
"""

from __future__ import annotations

import codecs
import io
import itertools
import zipfile
from collections.abc import Iterator
from dataclasses import dataclass
from posixpath import normpath
from xml.etree import ElementTree

from tracker.domain.darwincore import term_headings
from tracker.domain.spreadsheets import Table, TableError, csv_records, described_table
from tracker.domain.textfiles import MAX_SETTINGS_BYTES, MAX_TABLE_BYTES, FileProblem, decode_text

META = "meta.xml"
MAX_ARCHIVE_MEMBERS = 1_000  # a real archive holds a handful of files (common practice)
# meta.xml is a few kilobytes; the core file is a table, capped as any table is.
MAX_META_BYTES = MAX_SETTINGS_BYTES
MAX_CORE_BYTES = MAX_TABLE_BYTES
# The Text Guide's defaults for attributes a core element leaves out (from memory of the
# guide's table of attributes).
_DEFAULTS = {
    "fieldsTerminatedBy": ",",
    "linesTerminatedBy": "\n",
    "fieldsEnclosedBy": '"',
    "encoding": "UTF-8",
    "ignoreHeaderLines": "0",
}
NOT_AN_ARCHIVE = "is a zip archive without meta.xml: not a Darwin Core Archive"
DAMAGED = "is a damaged ZIP archive"
_ESCAPES = {"\\t": "\t", "\\n": "\n", "\\r": "\r", "\\\\": "\\"}


@dataclass(frozen=True)
class Archive:
    """An archive's core rows as a table, and what it holds that is not imported."""

    table: Table
    core: str  # the core file's location in the archive
    not_imported: list[str]  # each extension: its file and row type


def zip_problem(content: bytes) -> str:
    """Why a ZIP given as a CSV or TSV cannot be read so: say what the ZIP is."""
    archive = _opened(content)
    if archive is None:
        return DAMAGED
    names = set(archive.namelist())
    if "[Content_Types].xml" in names:  # the part every XLSX holds (ECMA-376)
        return "looks like an XLSX workbook; use a profile with format xlsx"
    if META in names:
        return "is a Darwin Core Archive (it holds meta.xml); give it as a lender's manifest"
    return NOT_AN_ARCHIVE


def is_archive(content: bytes) -> bool:
    """Whether the bytes are a ZIP holding meta.xml at its top (a Darwin Core Archive)."""
    archive = _opened(content) if content[:4] == b"PK\x03\x04" else None
    return archive is not None and META in archive.namelist()


def _opened(content: bytes) -> zipfile.ZipFile | None:
    """The bytes as a ZIP archive, or None when its directory cannot be read."""
    try:
        return zipfile.ZipFile(io.BytesIO(content))
    except (zipfile.BadZipFile, ValueError, EOFError):
        return None


def read_archive(content: bytes, *, keep_formulas: bool = False) -> Archive:
    """The core file's rows under the terms meta.xml gives, read lazily."""
    archive = _opened(content)
    if archive is None:
        raise TableError(1, "file", DAMAGED)
    members = archive.infolist()
    if len(members) > MAX_ARCHIVE_MEMBERS:
        raise TableError(
            1,
            "file",
            f"holds {len(members):,} files; archives are capped at {MAX_ARCHIVE_MEMBERS:,}",
        )
    if META not in archive.namelist():
        raise TableError(1, "file", NOT_AN_ARCHIVE)
    root = _parse_meta(_member(archive, META, MAX_META_BYTES))
    cores = [child for child in root if _local(child.tag) == "core"]
    if len(cores) != 1:
        raise _meta(f"has {len(cores)} <core> elements; the guide asks for one")
    core = cores[0]
    location = _location(core)
    records, skip = _core_records(_member(archive, location, MAX_CORE_BYTES), core, location)
    first = next(records, None)
    own = first[1] if first is not None and skip else []  # the file's header line, if any
    columns = _described(core, own)
    lines = (r for r in itertools.chain([first] if first else [], records) if r[0] > skip)
    table = described_table(columns.header, _filled(lines, columns), keep_formulas=keep_formulas)
    return Archive(table, location, [_extension(e) for e in root if _local(e.tag) == "extension"])


def _meta(reason: str) -> TableError:
    """A problem of meta.xml, said of the file as a whole."""
    return TableError(1, "file", f"meta.xml {reason}")


def _member(archive: zipfile.ZipFile, name: str, cap: int) -> bytes:
    """One member's bytes, refused before unpacking when it declares more than ``cap``."""
    try:
        info = archive.getinfo(name)
    except KeyError:
        raise _meta(f"names {name!r}, which the archive does not hold") from None
    if info.file_size > cap:
        raise TableError(
            1,
            "file",
            f"{name} unpacks to {info.file_size:,} bytes; archive members are capped at {cap:,}",
        )
    try:
        with archive.open(info) as member:  # zipfile stops at the declared size
            return member.read(cap + 1)
    except (zipfile.BadZipFile, NotImplementedError, EOFError, RuntimeError) as exc:
        raise TableError(1, "file", f"{name} cannot be unpacked ({exc})") from None


def _parse_meta(content: bytes) -> ElementTree.Element:
    """meta.xml's root, refused when it declares a DTD or entities (never expanded)."""
    head = content.upper()
    if b"<!DOCTYPE" in head or b"<!ENTITY" in head:
        raise _meta("declares a DTD or entities; archives never need them")
    try:
        root = ElementTree.fromstring(content)
    except ElementTree.ParseError as exc:
        line, column = exc.position
        raise _meta(f"is not well-formed XML (line {line}, column {column})") from None
    if _local(root.tag) != "archive":
        raise _meta(f"its root is <{_local(root.tag)}>, not <archive>")
    return root


def _local(tag: str) -> str:
    """An element's name without its namespace (archives are written with and without one)."""
    return tag.rsplit("}", 1)[-1]


def _location(element: ElementTree.Element) -> str:
    """The data file a <core> names, refused when its path would leave the archive."""
    found = [
        (node.text or "").strip()
        for node in element.iter()
        if _local(node.tag) == "location" and (node.text or "").strip()
    ]
    if not found:
        raise _meta("the <core> element names no <files><location>")
    location = found[0]
    if (
        location.startswith("/")
        or "\\" in location
        or ":" in location
        or normpath(location) != location
        or location.startswith("../")
    ):
        raise _meta(f"the core location {location[:80]!r} leaves the archive; refused")
    return location


def _extension(element: ElementTree.Element) -> str:
    """An extension as the preview names it: its file and its row type."""
    files = [n.text.strip() for n in element.iter() if _local(n.tag) == "location" and n.text]
    row_type = element.get("rowType", "no rowType")
    return f"{', '.join(files) or 'no file'} ({row_type})"


@dataclass(frozen=True)
class _Columns:
    """What meta.xml says of the core's columns."""

    header: list[str]  # by column index, then the constant (default-only) fields
    width: int  # columns the file itself holds
    constants: list[str]  # the default-only fields' values, every row
    blank_defaults: dict[int, str]  # a field's default, for a blank cell at that index


def _described(core: ElementTree.Element, own: list[str]) -> _Columns:
    """The core's headings (terms through ``term_headings``) and default values.

    A column meta.xml gives no term (the record id's, for one) keeps the file's own
    heading (``own``, its header line), or is named by its place: it is kept with the
    specimen, never dropped.
    """
    by_index: dict[int, str] = {}
    blank_defaults: dict[int, str] = {}
    constants: list[tuple[str, str]] = []
    ids: set[int] = set()
    for node in core:
        if _local(node.tag) == "id":
            ids.add(_index(node.get("index", "0"), "id"))
            continue
        if _local(node.tag) != "field":
            continue
        term, index, default = node.get("term", ""), node.get("index"), node.get("default")
        if not term:
            raise _meta("a <field> has no term")
        if index is None:
            constants.append((term, default or ""))
            continue
        by_index[_index(index, term)] = term
        if default:
            blank_defaults[_index(index, term)] = default
    width = max(max([*by_index, *ids], default=-1) + 1, len(own))
    written = [by_index.get(i) or _own(own, i, "id" if i in ids else "") for i in range(width)]
    written += [term for term, _ in constants]
    try:
        header = term_headings(written)
    except ValueError as exc:
        raise _meta(str(exc)) from None
    return _Columns(header, width, [value for _, value in constants], blank_defaults)


def _index(index: str, term: str) -> int:
    if not index.strip().isdigit() or int(index) >= 1_000:
        raise _meta(f"field {term!r} has index {index!r}")
    return int(index)


def _attribute(core: ElementTree.Element, name: str) -> str:
    """A core attribute with the guide's escapes (``\\t``) read as the characters they name."""
    value = core.get(name, _DEFAULTS[name])
    for escape, character in _ESCAPES.items():
        value = value.replace(escape, character)
    return value


def _own(own: list[str], index: int, fallback: str) -> str:
    """A column's heading in the file's header line, else ``fallback`` or its place."""
    heading = own[index].strip() if index < len(own) else ""
    return heading or fallback or f"column {index + 1}"


def _core_records(
    content: bytes, core: ElementTree.Element, location: str
) -> tuple[Iterator[tuple[int, list[str]]], int]:
    """The core file's records as meta.xml says to read them, and its header lines' count."""
    delimiter = _attribute(core, "fieldsTerminatedBy")
    quote = _attribute(core, "fieldsEnclosedBy")
    ending = _attribute(core, "linesTerminatedBy")
    skip = core.get("ignoreHeaderLines", "0").strip()
    if len(delimiter) != 1 or len(quote) > 1 or ending not in ("\n", "\r\n", "\r"):
        raise _meta(
            f"reads {location} with fieldsTerminatedBy {delimiter!r}, fieldsEnclosedBy "
            f"{quote!r}, linesTerminatedBy {ending!r}: tracker reads one-character delimiters, "
            "at most one quote character and the usual line ends",
        )
    if not skip.isdigit() or int(skip) > 100:
        raise _meta(f"ignoreHeaderLines is {skip!r}, not a small number")
    text = _decoded(content, delimiter, core.get("encoding", "UTF-8").strip())
    if ending == "\r":
        text = text.replace("\r", "\n")
    return csv_records(text, delimiter, quote or None), int(skip)


def _decoded(content: bytes, delimiter: str, encoding: str) -> str:
    """The core file's text in the encoding meta.xml names (single-byte or UTF-8 only)."""
    try:
        name = codecs.lookup(encoding).name
    except LookupError:
        raise _meta(f"names the encoding {encoding!r}, which is unknown") from None
    if name.startswith(("utf-16", "utf-32")):
        raise TableError(1, "file", f"the core file is {encoding}; save it as UTF-8")
    try:
        return decode_text(content, delimiter, MAX_CORE_BYTES, encoding=name)
    except FileProblem as problem:
        raise TableError(problem.row, problem.column, problem.reason) from None


def _filled(
    lines: Iterator[tuple[int, list[str]]], columns: _Columns
) -> Iterator[tuple[int, list[str]]]:
    """Each record padded to the described columns, defaults filled in, constants added."""
    width = columns.width
    for number, cells in lines:
        if len(cells) > width:  # never dropped, never shifted into the constants
            raise TableError(
                number,
                str(width + 1),
                f"the row has {len(cells)} cells but meta.xml describes {width} columns",
            )
        cells = [*cells, *[""] * (width - len(cells))]
        for index, default in columns.blank_defaults.items():
            if not cells[index].strip():
                cells[index] = default
        yield number, [*cells, *columns.constants]
