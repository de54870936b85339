"""Hostile files through the command line: one clear line, the file named, nothing written.

Every importer (instrument exports as CSV and XLSX, batch sheets, Sr reference curves,
mapping profiles, label-stock files) is handed wrong encodings, NUL bytes, a 100 MB
line, spreadsheet formulas, zip bombs, broken workbooks and settings nested 100 000
deep. CliRunner runs with catch_exceptions=False, so a traceback would fail the test
rather than be printed; each refusal must be exit 2, one stderr line naming the file
(and the row and column where the problem has one), with every table unchanged.
"""

from __future__ import annotations

from collections.abc import Callable
from functools import partial
from pathlib import Path

import pytest

from tests.cli.conftest import counts, invoke
from tests.reliability import hostile_files as h
from tests.reliability.bench import PROFILE, Bench, session_import
from tests.reliability.report import record

CURVE = "age_ma,87sr/86sr,u\n370,0.70820,0.00003\n380,0.70790,0.00003\n"
SHEET = "slot,kind,item,loaded,Ca\n1,blank,,,0.05 ug\n"
MANIFEST = "catalogNumber,locality\nINV 1,Pit (invented)\nINV 2,Pit (invented)\n"
STOCK = "[stock.lid]\npage_width_mm = 50.0\npage_height_mm = 30.0\nlabel_width_mm = 48.0\n"

Run = Callable[[Bench, Path], list[str]]
IMPORTERS: dict[str, tuple[str, Run]] = {
    "instrument export (CSV)": (".csv", lambda b, p: session_import(p, "csv")),
    "instrument export (XLSX)": (".xlsx", lambda b, p: session_import(p, "xlsx")),
    "batch sheet": (".csv", lambda b, p: ["batch", "sheet", b.batch, str(p)]),
    "lender manifest": (".csv", lambda b, p: ["manifest", "import", b.lab.loan, str(p)]),
    "lender manifest (XLSX)": (".xlsx", lambda b, p: ["manifest", "import", b.lab.loan, str(p)]),
    "lender manifest (archive)": (".zip", lambda b, p: ["manifest", "import", b.lab.loan, str(p)]),
    "batch sheet (XLSX)": (".xlsx", lambda b, p: ["batch", "sheet", b.batch, str(p)]),
    "Sr reference curve": (".csv", lambda b, p: ["curve", "add", "hostile", str(p)]),
    "mapping profile (TOML)": (".toml", lambda b, p: ["profile", "save", "hostile", str(p)]),
    "mapping profile (JSON)": (".json", lambda b, p: ["profile", "save", "hostile", str(p)]),
    "label stock file": (
        ".toml",
        lambda b, p: [
            "labels",
            "preview",
            "--stock",
            "lid",
            "--stocks",
            str(p),
            "--out",
            str(p) + ".png",
        ],
    ),
}

TEXT = {  # a well-formed file of each text importer, to spoil
    "instrument export (CSV)": h.GOOD_EXPORT,
    "batch sheet": SHEET,
    "lender manifest": MANIFEST,
    "Sr reference curve": CURVE,
    "mapping profile (TOML)": PROFILE.format(fmt="csv"),
    "mapping profile (JSON)": '{\n  "format": "csv"\n}',
    "label stock file": STOCK,
}


def _unclosed_quote(header: str) -> bytes:
    return f'{header}\n1,"STD-X,2.1\n2,b,3\n'.encode()


# (importer, case, file bytes, words the one line must hold; "row" cases name row and column)
CASES: list[tuple[str, str, Callable[[], bytes], tuple[str, ...]]] = []
for name, text in TEXT.items():
    CASES += [
        (name, "UTF-16 text", partial(h.utf16, text), ("UTF-16",)),
        (
            name,
            "Latin-1 bytes on row 2",
            partial(h.latin1_on_row, text + "\n", 2),
            ("row 2", "column", "not UTF-8"),
        ),
        (
            name,
            "a NUL byte on row 2",
            partial(h.nul_on_row, text + "\n", 2),
            ("row 2", "column", "NUL"),
        ),
        (name, "random binary", h.random_bytes, ()),
    ]
for name in ("instrument export (CSV)", "batch sheet", "lender manifest", "Sr reference curve"):
    header = TEXT[name].splitlines()[0]
    long_line = ("row 2", "column", "long") if name != "Sr reference curve" else ("files over",)
    CASES += [
        (name, "a 100 MB line", partial(h.huge_line, header), long_line),
        (
            name,
            "an unclosed quote",
            partial(_unclosed_quote, header),
            ("row 2", "column 2", "unexpected end of data"),
        ),
    ]
CASES += [
    (
        "instrument export (CSV)",
        "a formula in a value",
        lambda: (h.GOOD_EXPORT + "4,STD-X,=2.1*1\n").encode(),
        ("row 5", "column r4440", "formula"),
    ),
    (
        "instrument export (CSV)",
        "a formula in a name",
        lambda: (h.GOOD_EXPORT + '4,"=HYPERLINK(""x"")",2.1\n').encode(),
        ("row 5", "column Name", "formula"),
    ),
    (
        "batch sheet",
        "a formula",
        lambda: (SHEET + "2,blank,,,=A1\n").encode(),
        ("row 3", "column Ca", "formula"),
    ),
    (
        "lender manifest",  # text that starts like a formula is kept; a decimal comma is not
        "a decimal comma",
        lambda: (
            MANIFEST.replace("locality", "decimalLatitude")
            .replace("Pit (invented)", '"-41,25"')
            .encode()
        ),
        ("row 2", "decimalLatitude", "-41,25", "not a number"),
    ),
    ("mapping profile (JSON)", "JSON nested 100 000 deep", h.deep_json, ("too deeply",)),
    ("mapping profile (TOML)", "TOML nested 100 000 deep", h.deep_toml, ("too deeply",)),
    ("label stock file", "TOML nested 100 000 deep", h.deep_toml, ("too deeply",)),
    ("mapping profile (JSON)", "a list at the top", lambda: b"[1, 2]", ("table",)),
    (
        "label stock file",
        "a stock off its page",
        lambda: (STOCK + "label_height_mm = 40.0\n").encode(),
        ("larger than",),
    ),
    ("label stock file", "NaN sizes", lambda: STOCK.replace("50.0", "nan").encode(), ("lid",)),
]
for name in ("instrument export (XLSX)", "batch sheet (XLSX)", "lender manifest (XLSX)"):
    CASES += [
        (name, "a zip bomb (300 MB inflated)", h.zip_bomb, ("unpack",)),
        (name, "a zip lying about its sizes", h.lying_zip, ("XLSX",)),
        (name, "a billion-laughs XML entity", h.billion_laughs, ("XLSX",)),
        (name, "a truncated workbook", h.truncated_workbook, ("XLSX",)),
        (name, "ZIP magic, then noise", h.not_a_zip, ("XLSX",)),
        (name, "a cell at XFD1048576", h.far_corner, ("rows",)),
        (name, "5000 columns", h.wide_row, ("columns",)),
        (name, "plain text", lambda: b"Run,Name\n1,x\n", ("not an XLSX",)),
    ]
CASES += [
    ("lender manifest (archive)", "a zip bomb (300 MB core)", h.archive_bomb, ("unpacks to",)),
    (
        "lender manifest (archive)",
        "a core lying about its size",
        lambda: h.lying_zip(h.dwc_archive(), h.CORE),
        ("cannot be unpacked",),
    ),
    ("lender manifest (archive)", "a billion-laughs meta.xml", h.archive_laughs, ("entities",)),
    ("lender manifest (archive)", "a core outside the archive", h.archive_escape, ("leaves",)),
    ("lender manifest (archive)", "a ZIP without meta.xml", h.zip_without_meta, ("meta.xml",)),
]
CASES += [
    (
        "instrument export (XLSX)",
        "a formula never calculated",
        h.formula_without_value,
        ("row 2", "column r4440", "formula"),
    ),
]


@pytest.mark.slow
@pytest.mark.parametrize(
    ("importer", "build", "words"),
    [(c[0], c[2], c[3]) for c in CASES],
    ids=[f"{c[0]}: {c[1]}" for c in CASES],
)
def test_a_hostile_file_is_one_clear_line_and_writes_nothing(
    bench: Bench,
    tmp_path: Path,
    importer: str,
    build: Callable[[], bytes],
    words: tuple[str, ...],
) -> None:
    suffix, argv = IMPORTERS[importer]
    path = h.write(tmp_path / f"hostile{suffix}", build())
    before = counts(bench.path)
    result = invoke(*argv(bench, path), db=bench.path, actor=bench.lab.technician)
    assert result.exit_code == 2, (result.exit_code, result.stdout, result.stderr)
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: "), result.stderr
    assert "Traceback" not in result.stderr + result.stdout
    assert path.name in lines[0], lines[0]  # the file is named
    for word in words:
        assert word in lines[0], lines[0]
    assert counts(bench.path) == before
    _tally(importer)


_COUNTED: dict[str, int] = {}


def _tally(importer: str) -> None:
    _COUNTED[importer] = _COUNTED.get(importer, 0) + 1
    total = sum(_COUNTED.values())
    record(
        "hostile files through the CLI",
        f"{total} malformed files over {len(_COUNTED)} importers",
        "0 tracebacks, 0 rows written; each refusal one line naming the file (and row and column)",
    )
