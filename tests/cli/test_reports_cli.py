"""Return reports, Darwin Core exports, spreadsheet safety, shipments and photos, via the CLI.

No expected value comes from the report code itself: totals come from `tracker --json
reconcile`, masses from the demo scenario's weighings (gross − tare, replayed by hand in
tests/cli/budget_book.py), file digests from hashlib, structure from the committed JSON
Schemas (Draft 2020-12), PDF text from pypdf and spreadsheets from openpyxl.
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import re
import shlex
from dataclasses import dataclass
from datetime import UTC, datetime
from decimal import Decimal
from pathlib import Path
from typing import Any

import pytest
from openpyxl import load_workbook
from PIL import Image, ImageDraw
from pypdf import PdfReader

from tests.cli.budget_book import (
    KF,
    MDGC,
    NMFI,
    book,
    open_powder,
    reconcile,
    refused,
    specimen_id,
    validate,
)
from tests.cli.conftest import Lab, copy_sqlite, counts, invoke, ok_json
from tracker.output import tabular

# Darwin Core, TDWG; term list as in check-values.md ("Records and standards"), the
# Eon/Era/Period/Epoch/Age pairs written out, plus the other standard terms the exports use.
DARWIN_CORE = frozenset(
    """institutionCode collectionCode catalogNumber otherCatalogNumbers occurrenceID
    basisOfRecord preparations disposition materialSampleID scientificName identifiedBy
    typeStatus eventDate locality country countryCode decimalLatitude decimalLongitude
    geologicalContextID earliestEonOrLowestEonothem latestEonOrHighestEonothem
    earliestEraOrLowestErathem latestEraOrHighestErathem earliestPeriodOrLowestSystem
    latestPeriodOrHighestSystem earliestEpochOrLowestSeries latestEpochOrHighestSeries
    earliestAgeOrLowestStage latestAgeOrHighestStage lowestBiostratigraphicZone
    highestBiostratigraphicZone lithostratigraphicTerms group formation member bed
    measurementType measurementValue measurementAccuracy measurementUnit measurementMethod
    measurementDeterminedBy measurementDeterminedDate resourceRelationshipID
    relatedResourceID relationshipOfResource dynamicProperties measurementID
    measurementRemarks""".split()  # noqa: SIM905 - a list as it reads in check-values.md
)
MICROGRAM = 1e-3  # mg
FORMATS = ("pdf", "csv", "json", "xlsx")
LOANS = (KF, NMFI, MDGC)
TRIGGERS = ("=", "+", "-", "@", "\t", "\r")
SIGNED_NUMBER = re.compile(r"[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?")
PAGE_FURNITURE = re.compile(r"(Return report · .*|ledger head #\d+ \S+|page \d+ of \d+)")


# ---------------------------------------------------------------- helpers


def slug(loan: str) -> str:
    return loan.replace("/", "-")


def sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def run(db: Path, line: str | list[str], actor: str | None = "ines") -> Any:
    """`tracker --json ARGS` (a shell-like line or a list): exit 0 and one JSON document."""
    args = shlex.split(line) if isinstance(line, str) else line
    return ok_json(invoke(*args, db=db, actor=actor, as_json=True))


def csv_text(data: bytes) -> io.StringIO:
    return io.StringIO(data.decode("utf-8-sig"), newline="")  # a CR inside a cell stays a CR


def csv_rows(path: Path) -> list[dict[str, str]]:
    return list(csv.DictReader(csv_text(path.read_bytes())))


def xlsx_rows(path: Path) -> tuple[list[Any], list[list[Any]]]:
    sheet = load_workbook(path).active
    assert sheet is not None
    rows = [list(r) for r in sheet.iter_rows(values_only=True)]
    return rows[0], rows[1:]


def near(a: float, b: float) -> bool:
    return abs(a - b) < MICROGRAM / 2  # agree to the microgram


SPREAD = r"(?: ± [\d.]+)?"  # a mass's uncertainty, when it has one (never "± 0")


def agrees(printed: list[str], value: float) -> bool:
    """Printed figures (each rounded to its own last digit) add up to ``value``."""
    slack = Decimal(0)
    for figure in printed:
        decimals = len(figure.split(".")[1])
        assert decimals >= 3, figure  # the PDF never prints coarser than a microgram
        slack += Decimal(1).scaleb(-decimals) / 2
    total = sum((Decimal(f) for f in printed), Decimal(0))
    return abs(total - Decimal(repr(value))) <= slack + Decimal("1e-12")


def pdf_text(path: Path) -> tuple[list[str], str]:
    """Each page's text, and the body without page headers and footers, on one line."""
    pages = [page.extract_text() for page in PdfReader(path).pages]
    body = [ln for p in pages for ln in p.splitlines() if not PAGE_FURNITURE.fullmatch(ln.strip())]
    return pages, " ".join(" ".join(body).split())


def by_catalog(line: dict[str, Any]) -> dict[str, dict[str, Any]]:
    return {s["catalog_number"]: s for s in line["specimen_lines"]}


@dataclass
class Made:
    path: Path
    before: dict[str, int]
    after: dict[str, int]
    events: list[dict[str, Any]]  # the newest two: report.generated and the head it shows


def generate(db: Path, loan: str, fmt: str, folder: Path) -> Made:
    folder.mkdir(parents=True, exist_ok=True)
    out = folder / f"{slug(loan)}.{fmt}"
    before = counts(db)
    run(db, ["report", "return", loan, "--format", fmt, "--out", str(out)])
    return Made(out, before, counts(db), run(db, "ledger list --limit 2"))


@pytest.fixture(scope="module")
def made(demo_db: Path, tmp_path_factory: pytest.TempPathFactory) -> dict[Any, Any]:
    """Every demo loan's report in every format (one folder per format), and reconcile's lines."""
    root = tmp_path_factory.mktemp("reports")
    db = copy_sqlite(demo_db, root / "demo.sqlite")
    found: dict[Any, Any] = {"db": db}
    for loan in LOANS:
        found[loan] = reconcile(db, loan)
        for fmt in FORMATS:
            found[loan, fmt] = generate(db, loan, fmt, root / fmt)
    return found


# ---------------------------------------------------------------- 1. return reports


@pytest.mark.parametrize("fmt", FORMATS)
@pytest.mark.parametrize("loan", LOANS)
def test_each_report_is_one_event_naming_its_file_and_head(
    made: dict[Any, Any], loan: str, fmt: str
) -> None:
    m: Made = made[loan, fmt]
    changed = {k: m.after[k] - m.before[k] for k in m.after if m.after[k] != m.before[k]}
    assert changed == {"custody_event": 1, "ledger_head": 1}
    event, head = m.events
    assert event["seq"] == m.after["ledger_head"] and event["action"] == "report.generated"
    assert event["object"] == made[loan]["id"]
    assert event["payload"]["files"] == {fmt: sha256(m.path)}
    shows = (head["seq"], head["hash"])
    assert (event["payload"]["head_seq"], event["payload"]["head_hash"]) == shows
    assert head["seq"] == m.before["ledger_head"]
    anchor_file = m.path.with_name(f"{m.path.name}.anchor.json")
    anchor = json.loads(anchor_file.read_text())
    assert (anchor["seq"], anchor["hash"]) == (head["seq"], head["hash"])
    assert anchor["format"] == "tracker-anchor/2" and loan in anchor["label"]
    assert anchor["signed_by"] == "ines"  # the demo's manager wrote the report
    assert invoke("ledger", "verify", "--anchor", str(anchor_file), db=made["db"]).exit_code == 0
    # and the file itself shows that head
    if fmt == "json":
        shown = json.loads(m.path.read_text())["ledger"]
        assert (shown["seq"], shown["hash"], shown["intact"]) == (head["seq"], head["hash"], True)
    elif fmt == "csv":
        for row in csv_rows(m.path):
            assert (int(row["ledgerHeadSeq"]), row["ledgerHeadHash"]) == (head["seq"], head["hash"])
    elif fmt == "xlsx":
        header, rows = xlsx_rows(m.path)
        at = header.index("ledgerHeadSeq"), header.index("ledgerHeadHash")
        assert {(r[at[0]], r[at[1]]) for r in rows} == {(head["seq"], head["hash"])}
    else:
        assert f"ledger event #{head['seq']}, head hash {head['hash']}" in pdf_text(m.path)[1]


def test_the_ledger_stays_intact(made: dict[Any, Any]) -> None:
    verdict = ok_json(invoke("ledger", "verify", db=made["db"], as_json=True))
    assert verdict["ok"] is True
    assert verdict["head_seq"] == made[MDGC, "xlsx"].after["ledger_head"]


@pytest.mark.parametrize("loan", LOANS)
def test_json_report_is_valid_and_agrees_with_reconcile(made: dict[Any, Any], loan: str) -> None:
    report = json.loads(made[loan, "json"].path.read_text())
    validate(report, "return-report.schema.json")
    line, totals = made[loan], report["totals"]
    for key in ("drilled_mg", "dissolved_mg", "powder_returned_mg", "powder_on_hand_mg"):
        assert near(totals[key], line[key]), key
    lines = by_catalog(line)
    assert [s["catalog_number"] for s in report["specimens"]] == list(lines)
    for s in report["specimens"]:
        expected = lines[s["catalog_number"]]
        left = {
            st: sum(p["left_mg"] for p in s["powders"] if p["status"] == st)
            for st in ("returned", "available")
        }
        assert near(s["drilled_mg"], expected["drilled_mg"])
        assert near(sum(p["dissolved_mg"] for p in s["powders"]), expected["dissolved_mg"])
        assert near(left["returned"], expected["powder_returned_mg"])
        assert near(left["available"], expected["powder_on_hand_mg"])


@pytest.mark.parametrize("loan", LOANS)
def test_csv_report_columns_add_up_to_reconcile(made: dict[Any, Any], loan: str) -> None:
    rows, line = csv_rows(made[loan, "csv"].path), made[loan]
    lines = by_catalog(line)
    assert [r["catalogNumber"] for r in rows] == list(lines)

    def total(column: str) -> float:
        return sum(float(r[column]) for r in rows)

    assert near(total("massRemovedMg"), line["drilled_mg"])
    assert near(total("powderReturnedMg"), line["powder_returned_mg"])
    assert near(total("powderStillHeldMg"), line["powder_on_hand_mg"])
    fates = [f"powder{f}Mg" for f in ("Returned", "Destroyed", "Retained", "Consumed", "StillHeld")]
    for r in rows:
        expected = lines[r["catalogNumber"]]
        assert near(float(r["massRemovedMg"]), expected["drilled_mg"])
        assert near(float(r["powderReturnedMg"]), expected["powder_returned_mg"])
        assert near(float(r["powderStillHeldMg"]), expected["powder_on_hand_mg"])
        # no column says "dissolved": by closure it is removed − every fate of the powder
        dissolved = float(r["massRemovedMg"]) - sum(float(r[f]) for f in fates)
        assert near(dissolved, expected["dissolved_mg"])
    header, cells = xlsx_rows(made[loan, "xlsx"].path)  # the XLSX holds the same numbers
    assert [dict(zip(header, c, strict=True))["massRemovedMg"] for c in cells] == [
        float(r["massRemovedMg"]) for r in rows
    ]


def test_csv_report_states_the_dissolved_mass(made: dict[Any, Any]) -> None:
    assert any("issolved" in column for column in csv_rows(made[KF, "csv"].path)[0])


@pytest.mark.parametrize("loan", LOANS)
def test_pdf_figures_agree_with_reconcile_at_printed_precision(
    made: dict[Any, Any], loan: str
) -> None:
    body = pdf_text(made[loan, "pdf"].path)[1]
    line = made[loan]
    (removed,) = re.findall(rf"Mass removed \(all specimens\) ([\d.]+){SPREAD} mg", body)
    assert agrees([removed], line["drilled_mg"])
    for label, key in [
        ("Powder dissolved", "dissolved_mg"),
        ("Powder returned", "powder_returned_mg"),
        ("Powder still held by the borrower", "powder_on_hand_mg"),
    ]:
        (figure,) = re.findall(rf"{label} ([\d.]+) mg", body)
        assert agrees([figure], line[key]), label
    catalogs = list(by_catalog(line))
    starts = [body.index(f"{c} — ") for c in catalogs] + [body.index("Custody timeline")]
    assert starts == sorted(starts)
    powder = re.compile(
        rf"PW-\d{{5}}-\S .*? \d{{4}}-\d\d-\d\d ([\d.]+){SPREAD} mg ([\d.]+) mg ([\d.]+) mg "
        r"(\w+)"
    )
    for catalog, start, end in zip(catalogs, starts, starts[1:], strict=False):
        section, expected = body[start:end], by_catalog(line)[catalog]
        (mass,) = re.findall(rf"Mass removed / permitted ([\d.]+){SPREAD} mg", section)
        assert agrees([mass], expected["drilled_mg"]), catalog
        rows = powder.findall(section)
        assert len(rows) == expected["powders"], section
        assert agrees([r[0] for r in rows], expected["drilled_mg"])
        assert agrees([r[1] for r in rows], expected["dissolved_mg"])
        assert agrees([r[2] for r in rows if r[3] == "returned"], expected["powder_returned_mg"])
        assert agrees([r[2] for r in rows if r[3] == "available"], expected["powder_on_hand_mg"])


def test_report_totals_match_the_scenario_worked_by_hand(made: dict[Any, Any]) -> None:
    # NMFI-25-033, gross − tare: 815.853 − 812.341 = 3.512; 812.498 − 809.114 = 3.384;
    # 815.551 − 811.902 = 3.649 mg; total 10.545 mg. Dissolved 2.015 + 2.007 + 1.998 = 6.020 mg;
    # every leftover destroyed, so nothing returned and nothing still held.
    nmfi = json.loads(made[NMFI, "json"].path.read_text())
    assert near(nmfi["totals"]["drilled_mg"], 10.545)
    assert near(nmfi["totals"]["dissolved_mg"], 6.020)
    assert (nmfi["totals"]["powder_returned_mg"], nmfi["totals"]["powder_on_hand_mg"]) == (0, 0)
    for loan in (KF, MDGC):  # the same replay, done by budget_book for every drill
        ledger = book(loan)
        report = json.loads(made[loan, "json"].path.read_text())
        for s in report["specimens"]:
            (alias,) = [a for a, c in ledger.catalog.items() if c == s["catalog_number"]]
            assert near(s["drilled_mg"], float(ledger.drilled(ledger.of(alias))))


def test_pdf_pages_are_numbered_and_both_sides_sign(made: dict[Any, Any]) -> None:
    for loan in LOANS:
        pages, body = pdf_text(made[loan, "pdf"].path)
        for n, text in enumerate(pages, start=1):
            assert f"page {n} of {len(pages)}" in text, (loan, n)
        assert "For the lender" in body and "For the borrower" in body
        assert body.count("Signature:") == 2 and body.count("Date:") == 2
        for catalog in by_catalog(made[loan]):
            assert catalog in body
    assert len(PdfReader(made[MDGC, "pdf"].path).pages) > 1


def test_each_report_keeps_its_own_anchor(demo: Path, tmp_path: Path) -> None:
    pdf = generate(demo, NMFI, "pdf", tmp_path)
    generate(demo, NMFI, "csv", tmp_path)
    anchors = [json.loads(p.read_text()) for p in tmp_path.glob("*anchor*.json")]
    assert {a["seq"] for a in anchors} == {pdf.before["ledger_head"], pdf.after["ledger_head"]}


def test_a_refused_report_writes_no_file(demo: Path, tmp_path: Path) -> None:
    before, files = counts(demo), sorted(tmp_path.iterdir())  # the demo database lives here
    result = invoke("report", "return", KF, "--out", str(tmp_path / "r.pdf"), db=demo)
    assert result.exit_code == 2 and result.stderr.startswith("error: --as: "), result.stderr
    assert counts(demo) == before
    assert sorted(tmp_path.iterdir()) == files


@pytest.mark.parametrize(
    ("args", "field"),
    [
        (["report", "return", "NOPE-1", "--out", "x.pdf"], "LOAN"),
        (["shipment", "add", KF, "--direction", "outgoing", "--date", "2999-01-01"], "--date"),
        (["specimen", "photo", "KFMNH P 20311", "notes.md"], "FILE"),
    ],
)
def test_refusals_name_what_was_typed(
    demo: Path, tmp_path: Path, args: list[str], field: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    (tmp_path / "notes.md").write_text("# not a photograph\n")
    files = sorted(p.name for p in tmp_path.iterdir())  # the demo database and notes.md
    args = [specimen_id(demo, KF, a) if a.startswith("KFMNH") else a for a in args]
    before = counts(demo)
    refused(invoke(*args, db=demo, actor="ines"), 2, field)
    assert counts(demo) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == files


# ---------------------------------------------------------------- 4. Darwin Core exports


def export(db: Path, kind: str, loan: str, out: Path) -> list[dict[str, str]]:
    """Export as CSV and as XLSX; check both hold the same cells; return the CSV rows."""
    for path in (out, out.with_suffix(".xlsx")):
        answer = run(db, ["export", kind, "--loan", loan, "--out", str(path)], actor=None)
        assert answer["sha256"] == sha256(path)
    rows = csv_rows(out)
    header, cells = xlsx_rows(out.with_suffix(".xlsx"))
    assert header == list(rows[0])
    for row, values in zip(rows, cells, strict=True):  # same values; numbers stay numbers
        for heading, value in zip(header, values, strict=True):
            if isinstance(value, int | float):
                assert float(row[heading]) == value, heading
            else:
                assert row[heading] == ("" if value is None else value), heading
    return rows


def test_exports_use_darwin_core_headings_and_drilled_masses(demo: Path, tmp_path: Path) -> None:
    for loan in (KF, MDGC):
        ledger = book(loan)
        specimens = export(demo, "specimens", loan, tmp_path / f"{slug(loan)}-s.csv")
        measurements = export(demo, "measurements", loan, tmp_path / f"{slug(loan)}-m.csv")
        for rows in (specimens, measurements):
            assert set(rows[0]) <= DARWIN_CORE, set(rows[0]) - DARWIN_CORE
        assert sorted(r["catalogNumber"] for r in specimens) == sorted(ledger.catalog.values())
        drilled = [r for r in measurements if r["measurementType"].endswith("removed by drilling")]
        assert {r["measurementUnit"] for r in drilled} == {"mg"}
        for alias, catalog in ledger.catalog.items():  # each powder: gross − tare, by hand
            mine = [
                Decimal(r["measurementValue"]) for r in drilled if r["catalogNumber"] == catalog
            ]
            assert sorted(mine) == sorted(p.drilled for p in ledger.of(alias)), catalog


def test_loan_export_is_json_with_report_and_lineage(demo: Path, tmp_path: Path) -> None:
    out = tmp_path / "loan.json"
    answer = run(demo, ["export", "loan", MDGC, "--out", str(out)], actor=None)
    assert answer["sha256"] == sha256(out)
    document = json.loads(out.read_text(encoding="utf-8"))
    validate(document["report"], "return-report.schema.json")
    specimens = document["report"]["specimens"]
    assert [t["id"] for t in document["lineage"]] == [s["id"] for s in specimens]
    for tree, entry in zip(document["lineage"], specimens, strict=True):
        powders = [c["id"] for c in tree["children"] if c["kind"] == "powder"]
        assert powders == [p["id"] for p in entry["powders"]]
    assert near(document["report"]["totals"]["drilled_mg"], reconcile(demo, MDGC)["drilled_mg"])


# ---------------------------------------------------------------- 5. spreadsheet safety


def unsafe(cell: Any) -> bool:
    """Text a spreadsheet could run: starts with a trigger and is not a plain signed number."""
    return isinstance(cell, str) and cell.startswith(TRIGGERS) and not SIGNED_NUMBER.fullmatch(cell)


def test_formula_like_text_is_neutralised_in_every_export(lab: Lab, tmp_path: Path) -> None:
    link = '=HYPERLINK("http://example.invalid/s","open")'

    def do(line: str | list[str], actor: str = lab.manager) -> Any:
        return run(lab.path, line, actor)

    add = ["specimen", "add", "--loan", "FH-77", "--catalog"]
    sp = do([*add, link, "--locality", "+44 Quarry Lane (invented)", "--taxon", "@Lamna"])["item"]
    do([*add, "-FNHC 9", "--locality", "-12.5"])
    do([*add, "\tFNHC 10", "--locality", "\r=1+1"])
    do(["checkin", sp["id"], "--condition", "\r@SUM(1,2) root chipped", "--to", lab.box], "bram")
    do(f"drill {sp['id']} --tissue enamel --tare '1000.000 mg' --gross '1001.250 mg'", "bram")
    files = [
        tmp_path / f"{kind}.{suffix}"
        for kind in ("specimens", "measurements", "report")
        for suffix in ("csv", "xlsx")
    ]
    for path in files:
        if path.stem == "report":
            do(["report", "return", "FH-77", "--format", path.suffix[1:], "--out", str(path)])
        else:
            do(["export", path.stem, "--loan", "FH-77", "--out", str(path)])
    for path in files:
        if path.suffix == ".csv":  # CSV: text a spreadsheet would run gets an apostrophe
            cells = [c for row in csv.reader(csv_text(path.read_bytes())) for c in row]
            assert [c for c in cells if unsafe(c)] == [], path
            assert "'" + link in cells, path  # the catalogue number, shown as text
        else:  # XLSX: every text is a string cell (never run), holding the text exactly
            sheet = load_workbook(path).active
            assert sheet is not None
            typed = [c for row in sheet.iter_rows() for c in row if isinstance(c.value, str)]
            assert {c.data_type for c in typed} == {"s"}, path
            cells = [c.value for c in typed]
            assert link in cells and "'" + link not in cells, path
        assert not any(isinstance(c, str) and c.endswith("FNHC 10") and c[0] != "F" for c in cells)
    specimens = csv_rows(tmp_path / "specimens.csv")
    assert {"'+44 Quarry Lane (invented)", "-12.5", "'=1+1"} <= {r["locality"] for r in specimens}
    assert {"'@Lamna"} <= {r["scientificName"] for r in specimens}
    assert {"'-FNHC 9", "FNHC 10"} <= {r["catalogNumber"] for r in specimens}  # tab trimmed
    report = csv_rows(tmp_path / "report.csv")
    assert "'@SUM(1,2) root chipped" in {r["conditionAtReceipt"] for r in report}
    measured = csv_rows(tmp_path / "measurements.csv")
    (drilled,) = [r for r in measured if r["catalogNumber"] == "'" + link]
    assert Decimal(drilled["measurementValue"]) == Decimal("1.250")  # 1001.250 − 1000.000


def test_csv_prefixes_triggers_xlsx_writes_strings_and_numbers_stay_numbers(tmp_path: Path) -> None:
    texts = ["=1+1", "+A1", "-x", "@A1", "\tTAB", "\rCR", "-12.5", "+3", "plain"]
    numbers = [-12.5, -3, 0.25] * 3
    rows = [{"text": t, "number": n} for t, n in zip(texts, numbers, strict=True)]
    read = list(csv.reader(csv_text(tabular.csv_bytes(["text", "number"], rows))))
    expected = ["'=1+1", "'+A1", "'-x", "'@A1", "'\tTAB", "'\rCR", "-12.5", "+3", "plain"]
    assert [r[0] for r in read[1:]] == expected
    assert [float(r[1]) for r in read[1:]] == numbers
    (tmp_path / "t.xlsx").write_bytes(tabular.xlsx_bytes(["text", "number"], rows, "t"))
    _, cells = xlsx_rows(tmp_path / "t.xlsx")
    # XLSX: the text exactly, no apostrophe (a string cell is never run); XML reads a raw
    # CR back as LF (openpyxl writes it unescaped)
    assert [c[0] for c in cells] == [t.replace("\r", "\n") for t in texts]
    assert [c[1] for c in cells] == numbers  # numbers, not text
    sheet = load_workbook(tmp_path / "t.xlsx").active
    assert sheet is not None
    kinds = [(row[0].data_type, row[1].data_type) for row in sheet.iter_rows(min_row=2)]
    assert kinds == [("s", "n")] * len(texts)  # string cells, never formulas


# ---------------------------------------------------------------- 6. shipments and photos


def png(width: int, height: int) -> bytes:
    image = Image.new("RGB", (width, height), (236, 230, 214))
    ImageDraw.Draw(image).ellipse((4, 3, width - 5, height - 4), fill=(120, 96, 70))
    buffer = io.BytesIO()
    image.save(buffer, format="PNG")
    return buffer.getvalue()


def shipment(db: Path, loan: str, direction: str, *more: str) -> str:
    today = datetime.now(UTC).date().isoformat()
    args = ["shipment", "add", loan, "--direction", direction, "--date", today, *more]
    return str(run(db, args)["item"]["id"])


def test_a_return_shipment_shows_in_the_report(demo: Path, tmp_path: Path) -> None:
    sh = shipment(demo, KF, "outgoing", "--carrier", "courier (invented)")
    specimen = specimen_id(demo, KF, "KFMNH P 20315")
    powder = open_powder(demo, specimen)
    returned_before = reconcile(demo, KF)["powder_returned_mg"]
    # drilled 1204.902 − 1202.318 = 2.584 mg, none dissolved; weighed out 902.584 − 900.000
    run(
        demo,
        f"dispose {powder} --outcome returned --reason 'unused powder back' "
        f"--residual-tare '900.000 mg' --residual-gross '902.584 mg' --shipment {sh}",
    )
    run(demo, f"return {specimen} --condition 'as received; pit mid-crown' --shipment {sh}")
    run(demo, f"report return {KF} --format json --out {tmp_path / 'kf.json'}")
    report = json.loads((tmp_path / "kf.json").read_text())
    validate(report, "return-report.schema.json")
    (entry,) = [s for s in report["specimens"] if s["id"] == specimen]
    assert (entry["return_shipment"], entry["status"]) == (sh, "returned")
    assert [(p["id"], p["shipment"], p["status"]) for p in entry["powders"]] == [
        (powder, sh, "returned")
    ]
    assert near(entry["powders"][0]["left_mg"], 2.584)
    returned = reconcile(demo, KF)["powder_returned_mg"]
    assert near(report["totals"]["powder_returned_mg"], returned)
    assert near(returned - returned_before, 2.584)
    (parcel,) = [s for s in report["shipments"] if s["id"] == sh]
    assert (parcel["direction"], parcel["carrier"]) == ("outgoing", "courier (invented)")


def test_a_foreign_or_incoming_shipment_is_refused(demo: Path) -> None:
    other, incoming = shipment(demo, MDGC, "outgoing"), shipment(demo, KF, "incoming")
    specimen = specimen_id(demo, KF, "KFMNH P 20316")
    powder = open_powder(demo, specimen)
    before = counts(demo)
    for sh, reason in [(other, "belongs to another loan"), (incoming, "is an incoming shipment")]:
        for line in (
            f"return {specimen} --condition ok --shipment {sh}",
            f"dispose {powder} --outcome returned --reason back --shipment {sh}",
        ):
            said = refused(invoke(*shlex.split(line), db=demo, actor="ines"), 1, "--shipment")
            assert said.endswith(f"{sh!r}: {reason}"), said
    with pytest.raises(AssertionError):  # a returned loan sends nothing more: exit 1
        shipment(demo, NMFI, "outgoing")
    assert counts(demo) == before


def test_a_photo_is_listed_kept_and_drawn(demo: Path, tmp_path: Path) -> None:
    picture = tmp_path / "p20313-receipt.png"
    picture.write_bytes(png(37, 23))
    digest = hashlib.sha256(picture.read_bytes()).hexdigest()
    specimen = specimen_id(demo, KF, "KFMNH P 20313")
    run(demo, f"specimen photo {specimen} {picture} --stage receipt --caption crown", "tomas")
    for fmt in ("json", "pdf"):
        run(demo, f"report return {KF} --format {fmt} --out {tmp_path / f'kf.{fmt}'}")
    report = json.loads((tmp_path / "kf.json").read_text())
    (entry,) = [s for s in report["specimens"] if s["id"] == specimen]
    assert [(p["stage"], p["sha256"], p["media_type"]) for p in entry["photos"]] == [
        ("receipt", digest, "image/png")
    ]
    assert (tmp_path / "kf-attachments" / digest).read_bytes() == picture.read_bytes()
    (page,) = [p for p in PdfReader(tmp_path / "kf.pdf").pages if digest[:16] in p.extract_text()]
    original = Image.open(picture).convert("RGB").tobytes()
    drawn = [i.image.convert("RGB").tobytes() for i in page.images if i.image is not None]
    assert original in drawn  # the very pixels of the photograph


def test_a_photo_that_is_not_an_image_is_refused(demo: Path, tmp_path: Path) -> None:
    fake = tmp_path / "fake.png"
    fake.write_bytes(b"this is not a picture\n")
    specimen = specimen_id(demo, KF, "KFMNH P 20311")
    before = counts(demo)
    refused(invoke("specimen", "photo", specimen, str(fake), db=demo, actor="tomas"), 2, None)
    assert counts(demo) == before
