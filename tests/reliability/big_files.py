"""Large and capped files, built in the test: lender lists, instrument exports, batch sheets,
reference curves, workbooks assembled part by part, and JPEG headers that claim a size.

Everything is invented ("Synthetic ..."). Files are written a line at a time so that the
test process never holds a whole one twice; workbooks are assembled from their XML parts
(ECMA-376's minimal package: content types, relationships, workbook, one sheet, shared
strings), which is how the shared-strings table can be made exactly as large as a test needs.
"""

from __future__ import annotations

import io
import random
import zipfile
from collections.abc import Iterable, Iterator
from pathlib import Path
from xml.sax.saxutils import escape

from PIL import Image

from tracker.services.loans.manifest_terms import OWN_FIELDS, TERM_FIELDS

# The columns a specimen row keeps, as tracker names them: the file builders take the
# product's list so a big lender list exercises every specimen column; what the tests
# assert (memory, caps) does not come from it.
SPECIMEN_TERMS = [*TERM_FIELDS, *OWN_FIELDS]
# Other Darwin Core terms (TDWG) a lender's list may carry: kept as a specimen's extra terms.
EXTRA_TERMS = [
    "country",
    "stateProvince",
    "county",
    "recordedBy",
    "fieldNumber",
    "occurrenceRemarks",
    "basisOfRecord",
    "typeStatus",
    "identifiedBy",
    "dateIdentified",
    "family",
    "genus",
    "specificEpithet",
    "member",
    "bed",
    "verbatimLocality",
    "minimumElevationInMeters",
    "maximumElevationInMeters",
    "otherCatalogNumbers",
]


def lender_rows(rows: int, seed: int = 5) -> Iterator[list[str]]:
    """A header, then ``rows`` invented specimens: unique numbers, repeated taxa and places."""
    rng = random.Random(seed)
    header = SPECIMEN_TERMS + EXTRA_TERMS
    yield header
    for n in range(1, rows + 1):
        cells = _specimen_cells(rng, n) | _extra_cells(rng, n)
        yield [cells[term] for term in header]  # a term without a value here fails loudly


def _specimen_cells(rng: random.Random, n: int) -> dict[str, str]:
    young = round(rng.uniform(0.01, 60.0), 2)
    return {
        "catalogNumber": f"SYN M {n:06d}",
        "institutionCode": "SM9999",
        "collectionCode": "SYN-P",
        "scientificName": f"Synthetic taxon {rng.randint(1, 400):03d}",
        "preparations": rng.choice(["tooth", "bone", "shell"]),
        "locality": f"Synthetic locality {rng.randint(1, 900):04d} (invented)",
        "formation": f"Synthetic Formation {rng.randint(1, 60):02d}",
        "earliestEpochOrLowestSeries": "Paleocene",
        "latestEpochOrHighestSeries": "Pleistocene",
        "ageMinMa": str(young),
        "ageMaxMa": str(round(young + rng.uniform(0, 5), 2)),
    }


def _extra_cells(rng: random.Random, n: int) -> dict[str, str]:
    return {
        "country": "Synthetica",
        "stateProvince": f"Province {rng.randint(1, 30)}",
        "county": f"County {rng.randint(1, 200)}",
        "recordedBy": f"Collector {rng.randint(1, 80)} (invented)",
        "fieldNumber": f"SYN-F-{n:06d}",
        "occurrenceRemarks": f"synthetic remark {rng.randint(1, 10**9)} on wear and breakage",
        "basisOfRecord": "PreservedSpecimen",
        "typeStatus": "",
        "identifiedBy": f"Identifier {rng.randint(1, 40)}",
        "dateIdentified": f"19{rng.randint(50, 99)}-0{rng.randint(1, 9)}-1{rng.randint(0, 9)}",
        "family": f"Synthetidae {rng.randint(1, 20)}",
        "genus": f"Synthetus {rng.randint(1, 50)}",
        "specificEpithet": f"inventus{rng.randint(1, 90)}",
        "member": f"Member {rng.randint(1, 9)}",
        "bed": f"Bed {rng.randint(1, 40)}",
        "verbatimLocality": f"{rng.randint(1, 99)} km from Synthetic Town (invented)",
        "minimumElevationInMeters": str(rng.randint(0, 900)),
        "maximumElevationInMeters": str(rng.randint(900, 2000)),
        "otherCatalogNumbers": f"OLD-{rng.randint(1, 10**6)}",
    }


# The mapping profile that reads export_rows (``{fmt}`` is csv or xlsx).
EXPORT_PROFILE = (
    'format = "{fmt}"\n[columns]\nrun_order = "Run"\nsample_name = "Name"\n'
    '[columns.ratios]\n"44/40" = "r4440"\n"48/44" = "r4844"\n'
    '[columns.errors]\n"44/40" = "r4440 2SE"\n"48/44" = "r4844 2SE"\n'
)


def export_rows(rows: int) -> Iterator[list[str]]:
    """An instrument export: run, name, two ratios and their internal errors (all standards)."""
    yield ["Run", "Name", "r4440", "r4440 2SE", "r4844", "r4844 2SE"]
    for n in range(1, rows + 1):
        yield [str(n), "STD-X", f"2.{n % 9973:04d}1", "0.00012", f"0.0{n % 97 + 1:02d}", "0.00003"]


def write_csv(path: Path, rows: Iterable[list[str]]) -> Path:
    """Rows as CSV (no cell here needs quoting), a line at a time."""
    with path.open("w", encoding="utf-8", newline="\n") as out:
        for row in rows:
            out.write(",".join(row) + "\n")
    return path


# ---------------------------------------------------------------- workbooks by hand

_MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
_TYPE = "application/vnd.openxmlformats-officedocument.spreadsheetml"
_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
_PACKAGE_REL = "http://schemas.openxmlformats.org/package/2006/relationships"
_PARTS = {
    "[Content_Types].xml": (
        '<?xml version="1.0"?><Types xmlns="http://schemas.openxmlformats.org/package/2006/'
        'content-types"><Default Extension="rels" ContentType="application/vnd.openxmlformats-'
        'package.relationships+xml"/><Default Extension="xml" ContentType="application/xml"/>'
        f'<Override PartName="/xl/workbook.xml" ContentType="{_TYPE}.sheet.main+xml"/>'
        f'<Override PartName="/xl/worksheets/sheet1.xml" ContentType="{_TYPE}.worksheet+xml"/>'
        f'<Override PartName="/xl/sharedStrings.xml" ContentType="{_TYPE}.sharedStrings+xml"/>'
        "</Types>"
    ),
    "_rels/.rels": (
        f'<?xml version="1.0"?><Relationships xmlns="{_PACKAGE_REL}"><Relationship Id="rId1" '
        f'Type="{_REL}/officeDocument" Target="xl/workbook.xml"/></Relationships>'
    ),
    "xl/workbook.xml": (
        f'<?xml version="1.0"?><workbook xmlns="{_MAIN}" xmlns:r="{_REL}"><sheets>'
        '<sheet name="Sheet1" sheetId="1" r:id="rId1"/></sheets></workbook>'
    ),
    "xl/_rels/workbook.xml.rels": (
        f'<?xml version="1.0"?><Relationships xmlns="{_PACKAGE_REL}">'
        f'<Relationship Id="rId1" Type="{_REL}/worksheet" Target="worksheets/sheet1.xml"/>'
        f'<Relationship Id="rId2" Type="{_REL}/sharedStrings" Target="sharedStrings.xml"/>'
        "</Relationships>"
    ),
}


def _column(number: int) -> str:
    letters = ""
    while number:
        number, rest = divmod(number - 1, 26)
        letters = chr(65 + rest) + letters
    return letters


def write_workbook(path: Path, rows: Iterable[list[str]], padding: Iterable[str] = ()) -> Path:
    """A workbook whose cells are all shared strings, in first-use order, then ``padding``:
    more entries in the shared-strings table that no cell uses (as a workbook may hold)."""
    index: dict[str, int] = {}
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as book:
        for name, text in _PARTS.items():
            book.writestr(name, text)
        with book.open("xl/worksheets/sheet1.xml", "w", force_zip64=True) as sheet:
            sheet.write(f'<?xml version="1.0"?><worksheet xmlns="{_MAIN}"><sheetData>'.encode())
            for r, row in enumerate(rows, start=1):
                cells = "".join(
                    f'<c r="{_column(c)}{r}" t="s"><v>{index.setdefault(text, len(index))}</v></c>'
                    for c, text in enumerate(row, start=1)
                    if text
                )
                sheet.write(f'<row r="{r}">{cells}</row>'.encode())
            sheet.write(b"</sheetData></worksheet>")
        with book.open("xl/sharedStrings.xml", "w", force_zip64=True) as strings:
            strings.write(f'<?xml version="1.0"?><sst xmlns="{_MAIN}">'.encode())
            for text in [*index, *padding]:
                strings.write(f"<si><t>{escape(text)}</t></si>".encode())
            strings.write(b"</sst>")
    return path


def shared_strings(path: Path) -> tuple[int, int]:
    """How many entries a workbook written here has in its shared strings, and characters."""
    with zipfile.ZipFile(path) as book:
        xml = book.read("xl/sharedStrings.xml").decode()
    texts = [part.split("</t>")[0] for part in xml.split("<t>")[1:]]
    return len(texts), sum(len(text) for text in texts)


# ---------------------------------------------------------------- label stocks and photographs

WALL_STOCK = (  # a lab's own stock as large as a stock may be: 2 m × 1.9 m
    "[stock.wall]\npage_width_mm = 2000.0\npage_height_mm = 1900.0\n"
    "label_width_mm = 60.0\nlabel_height_mm = 30.0\n"
)


def jpeg_claiming(width: int, height: int) -> bytes:
    """A small real JPEG whose frame header (SOF0) claims ``width`` × ``height`` pixels.

    A decoder reads the size from the header before any pixel; nothing else in the file
    checks it, so a few hundred bytes can stand for any size a test needs.
    """
    buffer = io.BytesIO()
    Image.new("RGB", (16, 16), (180, 170, 150)).save(buffer, "JPEG", quality=80)
    data = bytearray(buffer.getvalue())
    sof = 2  # ITU-T T.81: after SOI, segments of marker (2 bytes) and length (2 bytes)
    while data[sof : sof + 2] != b"\xff\xc0":  # SOF0: length, precision, height, width
        sof += 2 + int.from_bytes(data[sof + 2 : sof + 4], "big")
    data[sof + 5 : sof + 7] = height.to_bytes(2, "big")
    data[sof + 7 : sof + 9] = width.to_bytes(2, "big")
    return bytes(data)


def noisy_jpeg(path: Path, width: int, height: int) -> Path:
    """A real photograph-sized JPEG (noise, so it does not compress to nothing)."""
    Image.effect_noise((width, height), 40).convert("RGB").save(path, "JPEG", quality=75)
    return path
