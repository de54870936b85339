"""Lenders' manifests as collections publish them: Darwin Core Archives and term headings.

The archives are built here, in the shape the TDWG Darwin Core Text Guide describes
(meta.xml naming a core file, its delimiters and its fields by term IRI); every
institution, catalogue number, place and person is invented. Expected values are read
off the files written here, never off tracker's output.
"""

from __future__ import annotations

import io
import json
import zipfile
from collections.abc import Callable

import pytest

from tests import factories
from tests.conftest import snapshot_counts
from tracker.db.database import Database
from tracker.domain.errors import InputError
from tracker.services.loans import manifests
from tracker.services.read.exports import specimen_rows

DWC = "http://rs.tdwg.org/dwc/terms/"
TEXT = "http://rs.tdwg.org/dwc/text/"  # the Text Guide's namespace for meta.xml


def archive(
    core: str,
    fields: str,
    *,
    attributes: str = 'fieldsTerminatedBy="\\t" fieldsEnclosedBy="" ignoreHeaderLines="1"',
    extensions: str = "",
    members: dict[str, str] | None = None,
    location: str = "occurrence.txt",
) -> bytes:
    """A Darwin Core Archive: meta.xml, the core file, and any other members given."""
    meta = (
        f'<?xml version="1.0" encoding="UTF-8"?>\n<archive xmlns="{TEXT}" metadata="eml.xml">\n'
        f'  <core encoding="UTF-8" linesTerminatedBy="\\n" {attributes} '
        f'rowType="{DWC}Occurrence">\n'
        f"    <files><location>{location}</location></files>\n"
        f'    <id index="0"/>\n{fields}  </core>\n{extensions}</archive>\n'
    )
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as made:
        made.writestr("meta.xml", meta)
        made.writestr("occurrence.txt", core)
        made.writestr("eml.xml", "<eml><dataset><title>Invented</title></dataset></eml>")
        for name, text in (members or {}).items():
            made.writestr(name, text)
    return buffer.getvalue()


def field(index: int | None, term: str, default: str | None = None) -> str:
    at = "" if index is None else f' index="{index}"'
    value = "" if default is None else f' default="{default}"'
    return f'    <field{at} term="{DWC}{term}"{value}/>\n'


def request(loan: str, content: bytes, name: str = "lender.zip") -> dict[str, object]:
    return {"loan": loan, "filename": name, "content": content}


def cells(db: Database, loan: str) -> dict[str, dict[str, object]]:
    """The exported specimen rows by catalogue number."""
    _, rows = specimen_rows(db, loan)
    return {str(row["catalogNumber"]): row for row in rows}


# ---------------------------------------------------------------- reading archives


def test_an_archive_with_a_header_line_is_read_by_its_meta_xml(db: Database) -> None:
    loan = factories.loan(db)
    # the file's own header line says other words: meta.xml's terms decide
    core = "id\tnumber\ttaxon\tplace\nq1\tIMN 4001\tCarcharodon sp.\tOrrin Bluff (invented)\n"
    fields = field(0, "occurrenceID") + field(1, "catalogNumber")
    fields += field(2, "scientificName") + field(3, "locality")
    preview = manifests.preview_manifest(db, request(loan, archive(core, fields)))
    assert [(r.catalog_number, r.action) for r in preview.rows] == [("IMN 4001", "create")]
    manifests.import_manifest(db, "boss", request(loan, archive(core, fields)))
    row = cells(db, loan)["IMN 4001"]
    assert row["scientificName"] == "Carcharodon sp."
    assert row["locality"] == "Orrin Bluff (invented)"
    assert row["occurrenceID"] == "q1"


def test_a_headerless_archive_takes_its_headings_from_the_terms_and_defaults(
    db: Database,
) -> None:
    loan = factories.loan(db)
    core = "q7\tIMN 4007\t\nq8\tIMN 4008\tTessary Marl (invented)\n"  # no header line
    fields = field(0, "occurrenceID") + field(1, "catalogNumber")
    fields += field(2, "formation", default="Orrin Sands (invented)")  # fills a blank cell
    fields += field(None, "institutionCode", default="IMN")  # the same for every row
    attributes = 'fieldsTerminatedBy="\\t" fieldsEnclosedBy="" ignoreHeaderLines="0"'
    content = archive(core, fields, attributes=attributes)
    preview = manifests.preview_manifest(db, request(loan, content))
    assert [r.catalog_number for r in preview.rows] == ["IMN 4007", "IMN 4008"]
    manifests.import_manifest(db, "boss", request(loan, content))
    rows = cells(db, loan)
    assert {r["institutionCode"] for r in rows.values()} == {"IMN"}
    assert rows["IMN 4007"]["formation"] == "Orrin Sands (invented)"
    assert rows["IMN 4008"]["formation"] == "Tessary Marl (invented)"


def test_a_comma_delimited_archive_reads_quoted_cells(db: Database) -> None:
    loan = factories.loan(db)
    core = (
        "id,catalogNumber,locality\n"
        'q1,IMN 5001,"Quarry 3, upper ledge (invented)"\n'
        'q2,IMN 5002,"the ""red"" bed (invented)"\n'
    )
    fields = field(0, "occurrenceID") + field(1, "catalogNumber") + field(2, "locality")
    attributes = 'fieldsTerminatedBy="," fieldsEnclosedBy=\'"\' ignoreHeaderLines="1"'
    manifests.import_manifest(
        db, "boss", request(loan, archive(core, fields, attributes=attributes))
    )
    rows = cells(db, loan)
    assert rows["IMN 5001"]["locality"] == "Quarry 3, upper ledge (invented)"
    assert rows["IMN 5002"]["locality"] == 'the "red" bed (invented)'


def test_an_archive_in_a_single_byte_encoding_with_crlf_lines_is_read_as_meta_says(
    db: Database,
) -> None:
    loan = factories.loan(db)
    fields = field(0, "occurrenceID") + field(1, "catalogNumber") + field(2, "locality")
    attributes = 'fieldsTerminatedBy="\\t" fieldsEnclosedBy="" ignoreHeaderLines="0"'
    meta_core = archive("", fields, attributes=attributes)
    core = "q1\tIMN 5101\tCôte Orrin (invented)\r\n".encode("iso-8859-1")
    content = rebuilt(
        meta_core,
        core,
        'encoding="UTF-8" linesTerminatedBy="\\n"',
        'encoding="ISO-8859-1" linesTerminatedBy="\\r\\n"',
    )
    manifests.import_manifest(db, "boss", request(loan, content))
    assert cells(db, loan)["IMN 5101"]["locality"] == "Côte Orrin (invented)"


def rebuilt(content: bytes, core: bytes, old: str, new: str) -> bytes:
    """The archive with another core file and one attribute text of meta.xml replaced."""
    buffer = io.BytesIO()
    with zipfile.ZipFile(io.BytesIO(content)) as source, zipfile.ZipFile(buffer, "w") as made:
        for name in source.namelist():
            data = source.read(name)
            if name == "meta.xml":
                data = data.replace(old.encode(), new.encode())
            made.writestr(name, core if name == "occurrence.txt" else data)
    return buffer.getvalue()


def test_the_preview_names_the_extensions_it_does_not_import(db: Database) -> None:
    loan = factories.loan(db)
    extension = (
        f'  <extension rowType="{DWC}MeasurementOrFact" fieldsTerminatedBy="\\t">\n'
        "    <files><location>measurements.txt</location></files>\n"
        f'    <coreid index="0"/>\n    <field index="1" term="{DWC}measurementType"/>\n'
        "  </extension>\n"
    )
    content = archive(
        "id\tcatalogNumber\nq1\tIMN 6001\n",
        field(0, "occurrenceID") + field(1, "catalogNumber"),
        extensions=extension,
        members={"measurements.txt": "q1\tlength\n"},
    )
    preview = manifests.preview_manifest(db, request(loan, content))
    assert preview.not_imported == [f"measurements.txt ({DWC}MeasurementOrFact)"]
    assert preview.create == 1


def plain_zip() -> bytes:
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as made:
        made.writestr("occurrence.txt", "catalogNumber\nIMN 1\n")
    return buffer.getvalue()


def escaping_location() -> bytes:
    fields = field(0, "occurrenceID") + field(1, "catalogNumber")
    return archive("q1\tIMN 1\n", fields, location="../../etc/occurrence.txt")


def entity_meta() -> bytes:
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as made:
        made.writestr(
            "meta.xml",
            '<?xml version="1.0"?><!DOCTYPE a [<!ENTITY x "xx">]><archive>&x;</archive>',
        )
    return buffer.getvalue()


@pytest.mark.parametrize(
    ("build", "words"),
    [
        (plain_zip, "is a zip archive without meta.xml: not a Darwin Core Archive"),
        (escaping_location, "leaves the archive"),
        (entity_meta, "declares a DTD or entities"),
    ],
)
def test_refused_archives_say_why_and_write_nothing(
    db: Database, build: Callable[[], bytes], words: str
) -> None:
    loan = factories.loan(db)
    content = build()
    before = snapshot_counts(db)
    for name in ("lender.zip", "lender.csv"):  # a ZIP is known by its bytes, not its name
        with pytest.raises(InputError) as caught:
            manifests.preview_manifest(db, request(loan, content, name))
        assert words in str(caught.value)
        with pytest.raises(InputError) as caught:
            manifests.import_manifest(db, "boss", request(loan, content, name))
        assert words in str(caught.value)
    assert snapshot_counts(db) == before


def test_an_archive_over_its_caps_is_refused_before_unpacking(
    db: Database, monkeypatch: pytest.MonkeyPatch
) -> None:
    from tracker.domain import dwca

    monkeypatch.setattr(dwca, "MAX_CORE_BYTES", 64)
    loan = factories.loan(db)
    core = "id\tcatalogNumber\n" + "".join(f"q{n}\tIMN {n}\n" for n in range(50))
    content = archive(core, field(0, "occurrenceID") + field(1, "catalogNumber"))
    before = snapshot_counts(db)
    with pytest.raises(InputError, match=r"occurrence\.txt unpacks to .* capped at 64"):
        manifests.import_manifest(db, "boss", request(loan, content))
    assert snapshot_counts(db) == before
    monkeypatch.setattr(dwca, "MAX_ARCHIVE_MEMBERS", 2)  # meta.xml, the core and eml.xml
    with pytest.raises(InputError, match="holds 3 files; archives are capped at 2"):
        manifests.import_manifest(db, "boss", request(loan, content))
    assert snapshot_counts(db) == before


# ---------------------------------------------------------------- headings and text files


def test_headings_are_matched_by_term_name_prefix_or_iri(db: Database) -> None:
    loan = factories.loan(db)
    text = (
        "DWC:CatalogNumber,http://rs.tdwg.org/dwc/terms/scientificName,LOCALITY,"
        "dcterms:modified,http://purl.org/dc/terms/rightsHolder,drawer\n"
        "IMN 7001,Isurus sp.,Orrin Bluff (invented),2025-02-03,Invented Museum,D4\n"
    )
    preview = manifests.preview_manifest(db, request(loan, text.encode(), "list.csv"))
    assert preview.create == 1 and preview.problems == 0
    assert preview.kept_as_extra == ["drawer", "modified", "rightsHolder"]
    manifests.import_manifest(db, "boss", request(loan, text.encode(), "list.csv"))
    row = cells(db, loan)["IMN 7001"]
    assert row["scientificName"] == "Isurus sp." and row["locality"] == "Orrin Bluff (invented)"
    assert row["modified"] == "2025-02-03" and row["rightsHolder"] == "Invented Museum"


def test_workbook_headings_are_spelt_by_the_same_rule(db: Database) -> None:
    from openpyxl import Workbook

    loan = factories.loan(db)
    book = Workbook()
    sheet = book.active
    assert sheet is not None
    sheet.append(["dwc:catalogNumber", "Locality", "http://purl.org/dc/terms/license"])
    sheet.append(["IMN 7101", "Orrin Bluff (invented)", "CC0 (invented note)"])
    buffer = io.BytesIO()
    book.save(buffer)
    manifests.import_manifest(db, "boss", request(loan, buffer.getvalue(), "list.xlsx"))
    row = cells(db, loan)["IMN 7101"]
    assert row["locality"] == "Orrin Bluff (invented)" and row["license"] == "CC0 (invented note)"


def test_two_headings_naming_one_term_are_refused(db: Database) -> None:
    loan = factories.loan(db)
    text = "catalogNumber,dwc:catalogNumber\nIMN 1,IMN 1\n"
    before = snapshot_counts(db)
    with pytest.raises(InputError) as caught:
        manifests.import_manifest(db, "boss", request(loan, text.encode(), "list.csv"))
    assert "'catalogNumber' and 'dwc:catalogNumber'" in str(caught.value)
    assert snapshot_counts(db) == before


def test_a_txt_file_is_tab_separated_and_its_quotes_are_data(db: Database) -> None:
    loan = factories.loan(db)
    text = 'catalogNumber\tlocality\nIMN 8001\t"Orrin" Bluff (invented)\n'
    manifests.import_manifest(db, "boss", request(loan, text.encode(), "lender.txt"))
    assert cells(db, loan)["IMN 8001"]["locality"] == '"Orrin" Bluff (invented)'
    # quotes are data in TSV: a tab between quotes still ends the cell
    wide = 'catalogNumber\tlocality\nIMN 8002\t"a\tb"\n'
    before = snapshot_counts(db)
    with pytest.raises(InputError) as caught:
        manifests.import_manifest(db, "boss", request(loan, wide.encode(), "lender.tsv"))
    assert caught.value.field == "lender.tsv, row 2, column 3"
    assert "3 cells but the header names 2 columns" in caught.value.reason
    assert snapshot_counts(db) == before


def test_a_zip_given_as_csv_through_a_profile_names_what_it_is(db: Database) -> None:
    loan = factories.loan(db)
    manifests.save_mapping(
        db, "boss", {"name": "plain", "definition": {"format": "csv", "columns": {}}}
    )
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as made:
        made.writestr("list.csv", "catalogNumber\nIMN 1\n")
    before = snapshot_counts(db)
    with pytest.raises(InputError, match=r"a zip archive without meta\.xml: not a Darwin Core"):
        manifests.preview_manifest(
            db, {**request(loan, buffer.getvalue(), "list.csv"), "mapping": "plain"}
        )
    workbook = io.BytesIO()
    with zipfile.ZipFile(workbook, "w") as made:  # the part every XLSX holds (ECMA-376)
        made.writestr("[Content_Types].xml", "<Types/>")
    with pytest.raises(InputError, match="looks like an XLSX workbook"):
        manifests.preview_manifest(
            db, {**request(loan, workbook.getvalue(), "list.csv"), "mapping": "plain"}
        )
    assert snapshot_counts(db) == before


# ---------------------------------------------------------------- what comes back out


def test_unknown_terms_and_the_lenders_dynamic_properties_come_back_out(db: Database) -> None:
    loan = factories.loan(db)
    lender_json = '{"drawer": "D9", "tagColour": "blue"}'
    core = (
        "id\tcatalogNumber\tdynamicProperties\ttrayLabel\tdrawer\tverbatimLabel\tboxNote\n"
        f"q1\tIMN 9001\t{lender_json}\tTray 12 (invented)\tD2\tIMN 9001 Orrin\tbox 3\n"
    )
    fields = field(0, "occurrenceID") + field(1, "catalogNumber")
    fields += field(2, "dynamicProperties") + field(5, "verbatimLabel")
    fields += '    <field index="3" term="http://example.org/invented/trayLabel"/>\n'
    fields += '    <field index="4" term="drawer"/>\n'
    manifests.import_manifest(db, "boss", request(loan, archive(core, fields)))
    columns, _ = specimen_rows(db, loan)
    row = cells(db, loan)["IMN 9001"]
    assert "verbatimLabel" in columns and row["verbatimLabel"] == "IMN 9001 Orrin"
    props = json.loads(str(row["dynamicProperties"]))
    assert props["tagColour"] == "blue" and props["drawer"] == "D9"  # the lender's, kept
    assert props["drawer (column)"] == "D2"  # their column with the same name, beside it
    assert props["http://example.org/invented/trayLabel"] == "Tray 12 (invented)"
    assert props["boxNote"] == "box 3"  # no term in meta.xml: the file's own heading
    assert props["trackerId"]  # what tracker adds, beside the lender's
