"""Lenders' manifests through the CLI: refused row by row, imported once, updated cell by cell.

Every lender, catalogue number and locality below is invented. Headings are Darwin Core terms
(TDWG), except where a test reads another layout through a saved mapping. Expected values are
worked by hand from the files written here; digests come from hashlib, structure from the
committed JSON Schemas (Draft 2020-12).
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
from pathlib import Path
from typing import Any

import pytest
from openpyxl import Workbook, load_workbook

from tests.cli.budget_book import NMFI, refused, validate
from tests.cli.conftest import Lab, counts, invoke
from tests.cli.test_reports_cli import DARWIN_CORE, csv_rows, csv_text, run

HEAD = (
    "catalogNumber,institutionCode,collectionCode,scientificName,preparations,locality,"
    "formation,earliestEpochOrLowestSeries,latestEpochOrHighestSeries,ageMinMa,ageMaxMa,"
    "eventDate,decimalLatitude,decimalLongitude,countryCode,drawerNote"
)
ROW = "FNHC M-{n},FNHC,VP,Lamniformes indet.,tooth,{place},Tessary Marl (invented),Miocene,Miocene,"
ROW += "11.6,16.0,1987-03-1{n[2]},-41.2{n[2]},172.5,ZZ,drawer {n[2]} (invented)"
# headings that are not specimen columns, kept with the specimen (worked out from HEAD by hand)
EXTRA = ["countryCode", "decimalLatitude", "decimalLongitude", "drawerNote", "eventDate"]


def clean(*places: str) -> str:
    rows = [ROW.format(n=f"10{i}", place=p) for i, p in enumerate(places, start=1)]
    return "\n".join([HEAD, *rows]) + "\n"


def put(folder: Path, name: str, content: str | bytes) -> Path:
    path = folder / name
    path.write_bytes(content.encode() if isinstance(content, str) else content)
    return path


def preview(lab: Lab, file: Path, *more: str) -> Any:
    """`manifest preview` with --json: exit 0 when clean, 2 with problems; valid either way."""
    result = invoke("manifest", "preview", "FH-77", str(file), *more, db=lab.path, as_json=True)
    assert result.exit_code in (0, 2), result.stderr
    answer = json.loads(result.stdout)
    validate(answer, "manifest-preview.schema.json")
    assert (result.exit_code == 2) == (answer["problems"] > 0)
    return answer


def manifest_import(lab: Lab, file: Path, *more: str) -> Any:
    return run(lab.path, ["manifest", "import", "FH-77", str(file), *more], lab.manager)


def last_event(lab: Lab) -> Any:
    (event,) = run(lab.path, "ledger list --limit 1", None)
    return event


# ---------------------------------------------------------------- 2. refusals


BAD = """catalogNumber,scientificName,locality,eventDate,decimalLatitude
FNHC M-201,Lamniformes indet.,Quillan Cut (invented),1987-03-12,-41.25
FNHC M-201,Lamniformes indet.,Quillan Cut (invented),1987-03-12,-41.25
FNHC M-203,Lamniformes indet.,Quillan Cut (invented),1987-03-12,"-41,25"
FNHC M-204,Lamniformes indet.,Quillan Cut (invented),12/03/1987,-41.25
FNHC M-205,Lamniformes indet.,Quillan Cut (invented),1987-03-12,forty-one south
,Lamniformes indet.,Quillan Cut (invented),1987-03-12,-41.25
"""
# row (line in the file) -> words its one problem must contain
EXPECTED = {
    3: ["catalogNumber", "FNHC M-201", "row 2"],  # a repeat of row 2
    4: ["decimalLatitude", "-41,25", "not a number"],  # a decimal comma is not guessed at
    5: ["eventDate", "12/03/1987"],  # day/month/year, not ISO 8601
    6: ["decimalLatitude", "forty-one south", "number"],
    7: ["catalogNumber", "empty"],
}


def test_five_kinds_of_error_are_named_row_by_row_and_nothing_is_written(
    lab: Lab, tmp_path: Path
) -> None:
    bad = put(tmp_path, "bad.csv", BAD)
    before = counts(lab.path)
    answer = preview(lab, bad)
    assert answer["problems"] == 5 and answer["create"] == 1
    rows = {r["row"]: r for r in answer["rows"]}
    assert sorted(rows) == [2, 3, 4, 5, 6, 7]
    assert (rows[2]["action"], rows[2]["problems"]) == ("create", [])
    for number, words in EXPECTED.items():
        (problem,) = rows[number]["problems"]
        assert rows[number]["action"] == "error"
        assert all(w in problem for w in words), (number, problem)
    human = invoke("manifest", "preview", "FH-77", str(bad), db=lab.path)
    assert human.exit_code == 2 and "5 problem(s)" in human.stdout
    assert human.stdout.count("ERROR") == 5
    result = invoke("manifest", "import", "FH-77", str(bad), db=lab.path, actor="ysolde")
    (line,) = result.stderr.splitlines()
    # the refusal points at the first problem (file and row, then its column) and counts all
    assert result.exit_code == 2 and line.startswith(f"error: {bad.name}, row 3: "), line
    assert "5 problem(s)" in line and "nothing was written" in line
    assert counts(lab.path) == before


def test_a_file_without_catalog_numbers_is_refused(lab: Lab, tmp_path: Path) -> None:
    missing = put(tmp_path, "missing.csv", "Cat No,locality\nA-1,Quarry\nA-2,Quarry\nA-3,Pit\n")
    before = counts(lab.path)
    answer = preview(lab, missing)
    assert [r["row"] for r in answer["rows"]] == [2, 3, 4]
    for row in answer["rows"]:
        assert any("no catalogNumber column" in p for p in row["problems"]), row
    result = invoke("manifest", "import", "FH-77", str(missing), db=lab.path, actor="ysolde")
    (line,) = result.stderr.splitlines()
    assert result.exit_code == 2 and line.startswith("error: missing.csv, header: no catalogNumber")
    assert counts(lab.path) == before


def test_a_missing_column_is_one_problem_per_row(lab: Lab, tmp_path: Path) -> None:
    answer = preview(lab, put(tmp_path, "m.csv", "Cat No,locality\nA-1,Quarry\nA-2,Quarry\n"))
    assert [len(r["problems"]) for r in answer["rows"]] == [1, 1]


@pytest.mark.slow
def test_unreadable_and_oversized_files_are_refused_whole(lab: Lab, tmp_path: Path) -> None:
    legacy = "catalogNumber,locality\nFNHC M-301,Café quarry\n".encode("cp1252")
    # "catalogNumber,locality\n" is 23 bytes, "FNHC M-301,Caf" 14 more: the é is byte 37
    assert legacy.index(b"\xe9") == 37
    big = b"catalogNumber\n" + b"".join(b"FNHC B-%d\n" % i for i in range(100_001))
    before = counts(lab.path)
    legacy_path, big_path = put(tmp_path, "cp1252.csv", legacy), put(tmp_path, "big.csv", big)
    for command in ("preview", "import"):
        result = invoke("manifest", command, "FH-77", str(legacy_path), db=lab.path, actor="ysolde")
        # the é is on line 2, in the second cell: the refusal names file, row and column
        assert result.exit_code == 2 and result.stderr.strip().splitlines() == [
            "error: cp1252.csv, row 2, column 2: byte 0xE9 is not UTF-8; save the file as UTF-8"
        ], command
        result = invoke("manifest", command, "FH-77", str(big_path), db=lab.path, actor="ysolde")
        reason = "has more than 100,000 rows; split it into files of at most 100,000"
        assert reason in refused(result, 2, "FILE"), command
    assert counts(lab.path) == before


def test_a_returned_loan_takes_no_manifest(demo: Path, tmp_path: Path) -> None:
    before = counts(demo)
    path = put(tmp_path, "late.csv", clean("Quillan Cut (invented)"))
    result = invoke("manifest", "import", NMFI, str(path), db=demo, actor="ines")
    assert refused(result, 1, "LOAN").endswith("is returned")
    assert counts(demo) == before


# ---------------------------------------------------------------- 3. clean imports


def test_a_clean_manifest_imports_once_and_updates_one_cell(lab: Lab, tmp_path: Path) -> None:
    first = clean("Quillan Cut (invented)", "Quillan Cut (invented)", "Orrel Scar (invented)")
    path = put(tmp_path, "fnhc.csv", first)
    answer = preview(lab, path)
    assert (answer["create"], answer["update"], answer["problems"]) == (3, 0, 0)
    assert answer["kept_as_extra"] == EXTRA
    before = counts(lab.path)
    outcome = manifest_import(lab, path)
    after = counts(lab.path)
    assert after["specimen"] - before["specimen"] == 3
    assert (after["custody_event"] - before["custody_event"], outcome["event_seq"]) == (
        1,
        after["ledger_head"],
    )
    event = last_event(lab)
    assert event["action"] == "manifest.imported"
    assert event["payload"]["sha256"] == hashlib.sha256(first.encode()).hexdigest()
    assert event["payload"]["created"] == outcome["created"]
    # the same file again: nothing at all
    again = manifest_import(lab, path)
    assert (again["created"], again["updated"], again["event_seq"]) == ([], [], None)
    assert counts(lab.path) == after
    # one cell changed: exactly that specimen, old → new in the event
    second = clean(
        "Quillan Cut (invented)", "Quillan Cut bed 3 (invented)", "Orrel Scar (invented)"
    )
    changed = manifest_import(lab, put(tmp_path, "fnhc-2.csv", second))
    m102 = outcome["created"][1]
    assert (changed["created"], changed["updated"]) == ([], [m102])
    assert counts(lab.path)["specimen"] == after["specimen"]
    assert last_event(lab)["payload"]["updated"] == {
        "FNHC M-102": {"locality": ["Quillan Cut (invented)", "Quillan Cut bed 3 (invented)"]}
    }
    history = run(lab.path, ["show", m102], None)["history"]
    imports = [h["seq"] for h in history if h["action"] == "manifest.imported"]
    assert imports == [outcome["event_seq"], changed["event_seq"]]
    # every heading kept: the extra terms travel with the specimen into the export
    exported = tmp_path / "out.csv"
    run(lab.path, ["export", "specimens", "--loan", "FH-77", "--out", str(exported)], None)
    rows = {r["catalogNumber"]: r for r in csv_rows(exported)}
    assert rows["FNHC M-101"]["locality"] == "Quillan Cut (invented)"
    assert rows["FNHC M-102"]["locality"] == "Quillan Cut bed 3 (invented)"
    for catalog, day in [("FNHC M-101", "1"), ("FNHC M-103", "3")]:
        cells = " ".join(rows[catalog].values())
        assert f"1987-03-1{day}" in cells and f"drawer {day} (invented)" in cells
        assert f"-41.2{day}" in cells  # a negative latitude stays a plain number


def test_exports_keep_darwin_core_headings_after_an_import(lab: Lab, tmp_path: Path) -> None:
    manifest_import(lab, put(tmp_path, "fnhc.csv", clean("Quillan Cut (invented)")))
    out = tmp_path / "out.csv"
    run(lab.path, ["export", "specimens", "--loan", "FH-77", "--out", str(out)], None)
    headings = set(csv_rows(out)[0])
    assert headings <= DARWIN_CORE, headings - DARWIN_CORE
    assert "drawer 1 (invented)" in out.read_text(encoding="utf-8-sig")


def test_a_saved_mapping_reads_other_headings(lab: Lab, tmp_path: Path) -> None:
    mapping = put(
        tmp_path,
        "fnhc-map.toml",
        'format = "csv"\n[columns]\n'
        'catalogNumber = "Cat. No."\nscientificName = "Taxon"\n'
        'locality = "Found at"\neventDate = "Collected"\n',
    )
    run(lab.path, ["manifest", "mapping", "fnhc-list", str(mapping)], lab.manager)
    listing = put(
        tmp_path,
        "their-list.csv",
        "Cat. No.,Taxon,Found at,Collected,Drawer\n"
        "FNHC Q-1,Otodontidae indet.,Orrel Scar (invented),1990-07-02,D-4\n"
        "FNHC Q-2,Lamniformes indet.,Orrel Scar (invented),1990-07-03,D-5\n",
    )
    answer = preview(lab, listing, "--mapping", "fnhc-list")
    assert (answer["create"], answer["problems"]) == (2, 0)
    assert answer["kept_as_extra"] == ["Drawer", "eventDate"]
    assert len(manifest_import(lab, listing, "--mapping", "fnhc-list")["created"]) == 2
    out = tmp_path / "out.csv"
    run(lab.path, ["export", "specimens", "--loan", "FH-77", "--out", str(out)], None)
    rows = {r["catalogNumber"]: r for r in csv_rows(out)}
    assert rows["FNHC Q-1"]["scientificName"] == "Otodontidae indet."
    assert rows["FNHC Q-2"]["locality"] == "Orrel Scar (invented)"
    assert rows["FNHC Q-2"]["eventDate"] == "1990-07-03"
    refused(
        invoke("manifest", "preview", "FH-77", str(listing), "--mapping", "none-such", db=lab.path),
        2,
        None,
    )


def xlsx(path: Path, text: str, dates: bool = False) -> Path:
    """The same table as the CSV text, numbers as numbers (and eventDate as a date cell)."""
    from datetime import date

    book = Workbook()
    sheet = book.active
    assert sheet is not None
    for row in csv.reader(io.StringIO(text)):
        cells: list[Any] = []
        for cell in row:
            try:
                cells.append(float(cell))
            except ValueError:
                is_date = dates and cell[:4] == "1987"
                cells.append(date.fromisoformat(cell) if is_date else cell)
        sheet.append(cells)
    book.save(path)
    return path


def test_xlsx_imports_like_csv(lab: Lab, tmp_path: Path) -> None:
    text = clean("Quillan Cut (invented)", "Orrel Scar (invented)")
    book = xlsx(tmp_path / "fnhc.xlsx", text)
    sheet = load_workbook(book).active
    assert sheet is not None and sheet["K2"].value == 16.0  # ageMaxMa is a number cell
    answer = preview(lab, book)
    assert (answer["create"], answer["problems"], answer["kept_as_extra"]) == (2, 0, EXTRA)
    assert len(manifest_import(lab, book)["created"]) == 2
    same = manifest_import(lab, put(tmp_path, "fnhc.csv", text))  # the CSV finds nothing new
    assert (same["created"], same["updated"], same["event_seq"]) == ([], [], None)
    rows = {r["row"]: r for r in preview(lab, xlsx(tmp_path / "bad.xlsx", BAD))["rows"]}
    for number in (3, 4, 5, 6, 7):
        (problem,) = rows[number]["problems"]
        assert all(w in problem for w in EXPECTED[number]), (number, problem)


FORMULA = '=HYPERLINK("http://example.invalid/a","a")'


def test_an_xlsx_formula_cell_is_reported(lab: Lab, tmp_path: Path) -> None:
    quoted = '"' + FORMULA.replace('"', '""') + '"'
    text = f"catalogNumber,locality\nFNHC M-301,{quoted}\n"
    book = xlsx(tmp_path / "bad.xlsx", text)
    sheet = load_workbook(book).active
    assert sheet is not None and sheet["B2"].data_type == "f"  # openpyxl wrote it as a formula
    (row,) = preview(lab, book)["rows"]
    (problem,) = row["problems"]
    assert all(w in problem for w in ("locality", "HYPERLINK", "formula")), problem


TYPED = ["- 5 km N of the ford (invented)", "@team", "=sum", "+44 0000 000000", FORMULA]


def test_text_that_starts_like_a_formula_is_kept_as_typed(lab: Lab, tmp_path: Path) -> None:
    buffer = io.StringIO()
    writer = csv.writer(buffer)
    writer.writerow(["catalogNumber", "locality", "recordedBy"])
    for n, text in enumerate(TYPED, start=1):
        writer.writerow([f"FNHC T-{n}", text, text])
    path = put(tmp_path, "typed.csv", buffer.getvalue())
    answer = preview(lab, path)
    assert (answer["problems"], answer["create"]) == (0, len(TYPED)), answer["rows"]
    manifest_import(lab, path)
    out = tmp_path / "out.csv"
    run(lab.path, ["export", "specimens", "--loan", "FH-77", "--out", str(out)], None)
    rows = {r["catalogNumber"]: r for r in csv_rows(out)}
    for n, text in enumerate(TYPED, start=1):  # CSV: the usual leading apostrophe
        assert rows[f"FNHC T-{n}"]["locality"] == "'" + text
    book = tmp_path / "out.xlsx"
    run(lab.path, ["export", "specimens", "--loan", "FH-77", "--out", str(book)], None)
    sheet = load_workbook(book).active
    assert sheet is not None
    header = [c.value for c in next(sheet.iter_rows())]
    found = {}
    for cells in sheet.iter_rows(min_row=2):
        values = dict(zip(header, cells, strict=True))
        found[values["catalogNumber"].value] = values["locality"]
    for n, text in enumerate(TYPED, start=1):  # XLSX: a string cell holding the text exactly
        cell = found[f"FNHC T-{n}"]
        assert (cell.data_type, cell.value) == ("s", text)


def test_an_xlsx_date_cell_reads_as_the_csv_date(lab: Lab, tmp_path: Path) -> None:
    text = clean("Quillan Cut (invented)")
    manifest_import(lab, put(tmp_path, "fnhc.csv", text))
    answer = preview(lab, xlsx(tmp_path / "fnhc.xlsx", text, dates=True))
    assert (answer["unchanged"], answer["update"]) == (1, 0), answer["rows"]


def test_a_formula_heading_never_reaches_a_spreadsheet_live(lab: Lab, tmp_path: Path) -> None:
    # Correct either way: the import refuses the heading, or every export neutralises it.
    heading = '"=HYPERLINK(""http://example.invalid/h"",""h"")"'
    path = put(tmp_path, "h.csv", f"catalogNumber,{heading}\nFNHC H-1,drawer 9\n")
    before = counts(lab.path)
    result = invoke("manifest", "import", "FH-77", str(path), db=lab.path, actor=lab.manager)
    if result.exit_code != 0:
        (line,) = result.stderr.splitlines()
        assert result.exit_code == 2 and line.startswith("error: h.csv, header: heading "), line
        assert counts(lab.path) == before
        return
    for suffix in ("csv", "xlsx"):
        out = tmp_path / f"out.{suffix}"
        run(lab.path, ["export", "specimens", "--loan", "FH-77", "--out", str(out)], None)
        if suffix == "csv":
            header = next(csv.reader(csv_text(out.read_bytes())))
        else:
            sheet = load_workbook(out).active
            assert sheet is not None
            first = next(sheet.iter_rows())
            assert all(c.data_type != "f" for c in first)  # no live formula in the heading row
            header = [c.value for c in first]
        assert not [h for h in header if str(h).startswith("=")], header


# ---------------------------------------------------------------- Darwin Core Archives


def test_an_archive_is_previewed_with_its_extensions_named_and_imported(
    lab: Lab, tmp_path: Path
) -> None:
    from tests.services.test_darwin_core_archives import DWC, archive, field

    extension = (
        f'  <extension rowType="{DWC}Identification">\n'
        "    <files><location>identifications.txt</location></files>\n"
        '    <coreid index="0"/>\n  </extension>\n'
    )
    content = archive(
        "id\tcatalogNumber\tlocality\nq1\tFNHC M-901\tOrrin Bluff (invented)\n",
        field(0, "occurrenceID") + field(1, "catalogNumber") + field(2, "locality"),
        extensions=extension,
    )
    file = put(tmp_path, "fnhc-archive.zip", content)
    answer = preview(lab, file)
    assert answer["not_imported"] == [f"identifications.txt ({DWC}Identification)"]
    shown = invoke("manifest", "preview", "FH-77", str(file), db=lab.path)
    said = " ".join(shown.stdout.split())  # the line wraps at the terminal's width
    assert "not imported (archive extensions): identifications.txt" in said
    outcome = manifest_import(lab, file)
    assert len(outcome["created"]) == 1
    event = last_event(lab)
    assert event["action"] == "manifest.imported"
    assert event["payload"]["sha256"] == hashlib.sha256(content).hexdigest()


def test_a_legacy_date_is_shown_as_a_warning_in_the_preview(lab: Lab, tmp_path: Path) -> None:
    path = put(tmp_path, "w.csv", "catalogNumber,dateIdentified\nFNHC W-1,12/03/1987\n")
    answer = preview(lab, path)
    assert answer["problems"] == 0 and answer["rows"][0]["action"] == "create"
    (warning,) = answer["rows"][0]["warnings"]
    human = invoke("manifest", "preview", "FH-77", str(path), db=lab.path)
    assert human.exit_code == 0 and "warning: column dateIdentified" in human.stdout
    assert "12/03/1987" in warning
