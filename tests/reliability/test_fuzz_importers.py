"""Hypothesis against every importer: only a clear refusal or a correct import, never a crash.

Pure readers (tables, settings files, anchors, label stocks) get arbitrary bytes and
structured-but-spoiled documents; the importing services (instrument sessions, batch
sheets, Sr curves, mapping profiles) get generated files on one SQLite bench. After a
refusal every table is as it was; after an import the rows match the file.
"""

from __future__ import annotations

import csv
import io
import math
import shutil
import zipfile
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any, TypeVar

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from sqlalchemy import select

from tests import factories as make
from tests.conftest import TickingClock, snapshot_counts
from tests.reliability.report import record
from tracker.db.database import Database, open_database
from tracker.domain.anchors import AnchorError, parse_anchor
from tracker.domain.dwca import read_archive
from tracker.domain.errors import InputError, TrackerError
from tracker.domain.formula_cells import looks_like_formula
from tracker.domain.models import SrCurve
from tracker.domain.spreadsheets import TableError, read_table
from tracker.domain.srcurve import Curve, CurvePoint
from tracker.domain.textfiles import FileProblem, load_settings
from tracker.output.stocks import StockEntry, validate
from tracker.services.bench import batch_sheet, chemistry
from tracker.services.instrument import screening, sessions
from tracker.services.loans import manifests

pytestmark = pytest.mark.slow
FAST = settings(max_examples=600, deadline=None)
SERVICE = settings(
    max_examples=150,
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)
CASES: dict[str, int] = {}
ACCEPTED: dict[str, int] = {}


def _count(importer: str, accepted: bool | None = None) -> None:
    if accepted is None:
        CASES[importer] = CASES.get(importer, 0) + 1
    elif accepted:
        ACCEPTED[importer] = ACCEPTED.get(importer, 0) + 1
    total = sum(CASES.values())
    imports = ", ".join(f"{k} {v}" for k, v in sorted(ACCEPTED.items()))
    record(
        "hypothesis fuzzing of every importer",
        f"{total} generated files over {len(CASES)} readers and services",
        "0 tracebacks; every refusal a TrackerError with nothing written; imports match "
        f"their files (accepted: {imports})",
    )


# ---------------------------------------------------------------- cells and files

NASTY = st.sampled_from(
    [
        '"',
        '""',
        ",",
        "\t",
        "\r",
        "\n",
        "\x00",
        "=1+1",
        "@SUM(A1)",
        "é",
        "δ44/40",
        "\ufeff",
        "1e999",
        "nan",
        "-0",
        "  ",
        "STD-X",
        "RM-A",
        "CU-00001-L",
        "cu00001l",
        "CU-00001-X",
    ]
)
CELL = st.one_of(
    st.text(max_size=12),
    NASTY,
    st.floats(allow_nan=True).map(repr),
    st.integers(-5, 100).map(str),
)


@st.composite
def maybe_spoiled(draw: st.DrawFn, rows: list[list[str]]) -> list[list[str]]:
    """The rows as they are (half the time), or with one cell replaced by a nasty one."""
    if not rows or draw(st.booleans()):
        return rows
    r = draw(st.integers(0, len(rows) - 1))
    if not rows[r]:
        return rows
    c = draw(st.integers(0, len(rows[r]) - 1))
    spoiled = [list(row) for row in rows]
    spoiled[r][c] = draw(CELL)
    return spoiled


def csv_text(rows: list[list[str]], delimiter: str = ",") -> bytes:
    """Cells joined naively (no quoting): quotes and delimiters in cells stay hostile."""
    return ("\n".join(delimiter.join(r) for r in rows) + "\n").encode("utf-8", "surrogatepass")


@st.composite
def spoiled_tables(draw: st.DrawFn) -> bytes:
    header = draw(
        st.lists(st.sampled_from(["Run", "Name", "r4440", "x", ""]), min_size=1, max_size=5)
    )
    rows = draw(st.lists(st.lists(CELL, max_size=6), max_size=8))
    return csv_text([header, *rows], draw(st.sampled_from([",", "\t"])))


# ---------------------------------------------------------------- pure readers


@FAST
@given(
    content=st.one_of(st.binary(max_size=3000), spoiled_tables()),
    fmt=st.sampled_from(["csv", "tsv", "xlsx"]),
)
def test_read_table_refuses_or_reads_every_cell(content: bytes, fmt: str) -> None:
    _count("tables (CSV/TSV/XLSX)")
    try:
        header, lazy = read_table(content, fmt)
        rows = list(lazy)  # the rows are read (and refused) as they are iterated
    except TableError as problem:
        assert problem.row >= 1 and problem.column and problem.reason
        return
    numbers = [r.number for r in rows]
    assert numbers == sorted(set(numbers)) and len(set(header)) == len(header)
    for row in rows:
        for text in row.cells.values():
            assert "\x00" not in text and not looks_like_formula(text)


@st.composite
def spoiled_archives(draw: st.DrawFn) -> bytes:
    """A Darwin Core Archive (TDWG Text Guide shape) with drawn attributes, fields and rows."""
    attributes = {
        name: draw(st.sampled_from(values))
        for name, values in {
            "fieldsTerminatedBy": ["\\t", ",", ";", "", "ab", "&quot;"],
            "fieldsEnclosedBy": ["", "&quot;", "'", "xy"],
            "linesTerminatedBy": ["\\n", "\\r\\n", "\\r", "|"],
            "encoding": ["UTF-8", "ISO-8859-1", "UTF-16", "no-such-code"],
            "ignoreHeaderLines": ["0", "1", "2", "-1", "x"],
        }.items()
    }
    indexes = draw(st.lists(st.one_of(st.none(), st.integers(0, 6)), max_size=6))
    terms = ["catalogNumber", "locality", "dynamicProperties", "drawer", ""]
    fields = "".join(
        f"<field{'' if i is None else f' index={chr(34)}{i}{chr(34)}'} "
        f'term="{draw(st.sampled_from(terms))}" default="{draw(st.sampled_from(["", "d"]))}"/>'
        for i in indexes
    )
    spoken = " ".join(f'{k}="{v}"' for k, v in attributes.items())
    location = draw(st.sampled_from(["core.txt", "../core.txt", "missing.txt", "/core.txt"]))
    meta = (
        f'<archive xmlns="http://rs.tdwg.org/dwc/text/"><core {spoken}>'
        f"<files><location>{location}</location></files>{fields}</core></archive>"
    )
    rows = draw(st.lists(st.lists(CELL, max_size=6), max_size=6))
    core = csv_text(rows, draw(st.sampled_from([",", "\t"]))) + draw(st.binary(max_size=20))
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as made:
        made.writestr("meta.xml", meta)
        made.writestr("core.txt", core)
    return buffer.getvalue()


@FAST
@given(
    content=st.one_of(st.binary(max_size=500).map(lambda b: b"PK\x03\x04" + b), spoiled_archives())
)
def test_read_archive_refuses_or_reads_every_cell(content: bytes) -> None:
    _count("Darwin Core Archives")
    try:
        header, lazy = read_archive(content).table
        rows = list(lazy)
    except TableError as problem:
        assert problem.row >= 1 and problem.column and problem.reason
        return
    assert len(set(header)) == len(header)
    for row in rows:
        assert list(row.cells) == header
    _count("Darwin Core Archives", accepted=True)


@FAST
@given(
    content=st.one_of(
        st.binary(max_size=2000),
        st.recursive(st.text(max_size=5), lambda inner: st.lists(inner, max_size=3)).map(
            lambda v: repr(v).encode()
        ),
    ),
    suffix=st.sampled_from([".toml", ".json"]),
)
def test_settings_files_refuse_or_give_a_table(content: bytes, suffix: str) -> None:
    _count("settings files (TOML/JSON)")
    try:
        data = load_settings(content, suffix)
    except FileProblem as problem:
        assert problem.row >= 1 and problem.reason
        return
    assert isinstance(data, dict)


@FAST
@given(
    text=st.one_of(
        st.text(max_size=300),
        st.builds(
            lambda seq, h: (
                f'{{"format": "tracker-anchor/1", "seq": {seq}, "hash": "{h}", '
                f'"first_hash": "{h}", "taken_at": "t"}}'
            ),
            st.one_of(st.integers(), st.floats().map(repr), st.just("true")),
            st.text(alphabet="0123456789abcdefABCDEF", min_size=60, max_size=66),
        ),
    )
)
def test_anchor_files_refuse_or_parse(text: str) -> None:
    _count("anchor files")
    try:
        anchor = parse_anchor(text)
    except AnchorError:
        return
    assert anchor.seq >= 1 and len(anchor.hash) == 64


STOCK_VALUES = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True),
    st.integers(-10, 3000),
    st.text(max_size=6),
    st.booleans(),
    st.lists(st.integers(), max_size=2),
)
STOCK_KEYS = [
    "page_width_mm",
    "page_height_mm",
    "label_width_mm",
    "label_height_mm",
    "columns",
    "rows",
    "pitch_x_mm",
    "pitch_y_mm",
    "margin_left_mm",
    "margin_top_mm",
    "shape",
    "layout",
    "padding_mm",
    "max_module_mm",
    "error_correction",
    "bogus",
]


@FAST
@given(
    table=st.dictionaries(st.sampled_from(STOCK_KEYS), STOCK_VALUES, max_size=12),
    name=st.text(max_size=8),
)
def test_label_stocks_refuse_or_fit_their_page(table: dict[str, Any], name: str) -> None:
    _count("label stocks")
    try:
        stock = validate(StockEntry(name, "fuzz.toml", table))
    except InputError as problem:
        assert problem.field == "stock" and "fuzz.toml" in problem.reason
        return
    last = stock.cell(stock.per_sheet - 1)
    tolerance = 1e-3
    assert last.right <= stock.page_width_mm + tolerance
    assert last.bottom <= stock.page_height_mm + tolerance


# ---------------------------------------------------------------- importing services


@pytest.fixture
def bench(sqlite_template: Path, tmp_path: Path) -> Iterator[tuple[Database, str, str]]:
    """A SQLite lab with a profile, a reference material, a batch and one cut's column."""
    shutil.copyfile(sqlite_template, tmp_path / "fuzz.sqlite")
    db = open_database(tmp_path / "fuzz.sqlite", clock=TickingClock())
    solution = make.solution(db, make.powder(db, make.specimen(db, make.loan(db))))
    make.concentration(db, solution, "500 ug/g")
    aliquot = make.aliquot(db, solution, grams="0.0200")
    batch = make.batch(db)
    chemistry.add_reference_material(db, "boss", {"name": "RM-A", "element": "Ca"})
    profile = {
        "format": "csv",
        "columns": {"run_order": "Run", "sample_name": "Name", "ratios": {"44/40": "r4440"}},
    }
    sessions.save_profile(db, "tech", {"name": "p", "definition": profile})
    yield db, batch, aliquot
    db.close()


Answer = TypeVar("Answer")


def _refused_or_done(db: Database, call: Callable[[], Answer], importer: str) -> Answer | None:
    """The call's answer, or None after a refusal that wrote nothing."""
    before = snapshot_counts(db)
    try:
        answer = call()
        _count(importer, accepted=True)
        return answer
    except TrackerError as problem:
        assert problem.one_line() and "\n" not in problem.one_line()
        assert snapshot_counts(db) == before
        return None


@st.composite
def session_rows(draw: st.DrawFn) -> list[list[str]]:
    """A bracketed run list (standard, target, standard, ...), then maybe one spoiled cell."""
    targets = draw(
        st.lists(
            st.sampled_from(["RM-A", "CU-00001-L", "wash", "CU-00009-X"]), min_size=1, max_size=6
        )
    )
    ratio = st.floats(0.5, 5).map(repr)
    rows = [["1", "STD-X", draw(ratio)]]
    for target in targets:
        run = len(rows) + 1
        rows += [[str(run), target, draw(ratio)], [str(run + 1), "STD-X", draw(ratio)]]
    return draw(maybe_spoiled(rows))


@SERVICE
@given(rows=session_rows())
def test_instrument_import_refuses_or_keeps_every_row(
    bench: tuple[Database, str, str], rows: list[list[str]]
) -> None:
    db, _, _ = bench
    _count("instrument import (service)")
    content = csv_text([["Run", "Name", "r4440"], *rows])
    request = {
        "profile": "p",
        "filename": "fuzz.csv",
        "content": content,
        "name": "fuzz",
        "instrument": "MC",
        "element": "Ca",
        "bracketing_standard": "STD-X",
    }
    call = lambda: sessions.import_session(db, "tech", request)  # noqa: E731
    answer = _refused_or_done(db, call, "instrument")
    if answer is not None:
        assert answer.item.measurements == len(rows)  # nothing dropped


@st.composite
def sheets(draw: st.DrawFn) -> list[list[str]]:
    """Columns 1..n (blanks and reference materials, the same on every sheet), spoiled or not."""
    rows = []
    for slot in range(1, draw(st.integers(1, 12)) + 1):
        kind, item, loaded = ("reference", "RM-A", "10 ug") if slot % 3 == 0 else ("blank", "", "")
        rows.append([str(slot), kind, item, loaded, f"{slot * 0.01:.2f} ug"])
    return draw(maybe_spoiled(rows))


@SERVICE
@given(rows=sheets())
def test_batch_sheets_refuse_or_enter_exactly_their_rows(
    bench: tuple[Database, str, str], rows: list[list[str]]
) -> None:
    db, _, _ = bench
    batch = make.batch(db)  # a fresh batch: every well-formed sheet is new to it
    _count("batch sheet (service)")
    content = csv_text([["slot", "kind", "item", "loaded", "Ca"], *rows])
    request = {"batch": batch, "filename": "fuzz.csv", "content": content}
    call = lambda: batch_sheet.enter_sheet(db, "tech", request)  # noqa: E731
    answer = _refused_or_done(db, call, "sheet")
    if answer is not None:
        item = answer.item
        # a column, and its cut where the cell holds something once read as CSV (Python's
        # own reader: a naive '""' is an empty quoted cell, so no cut)
        cells = list(csv.reader(io.StringIO(content.decode("utf-8"))))[1:]
        entries = len(cells) + sum(1 for r in cells if r[4].strip())
        assert len(item.positions_added) + len(item.cuts_added) + item.already_entered == entries


@st.composite
def curves(draw: st.DrawFn) -> list[list[str]]:
    ages = sorted(set(draw(st.lists(st.floats(0, 600), min_size=2, max_size=10))))
    rows = [
        [repr(a), repr(draw(st.floats(0.70, 0.71))), repr(draw(st.floats(0, 0.001)))] for a in ages
    ]
    return draw(maybe_spoiled(rows))


@SERVICE
@given(rows=curves(), ratio=st.floats(0.69, 0.72), u=st.floats(0, 0.01))
def test_sr_curves_refuse_or_screen_without_fail(
    bench: tuple[Database, str, str], rows: list[list[str]], ratio: float, u: float
) -> None:
    db, _, _ = bench
    _count("Sr curve (service)")
    content = csv_text([["age_ma", "87sr/86sr", "u"], *rows])
    name = f"fuzz-{CASES['Sr curve (service)']}"
    request = {"name": name, "content": content, "filename": "fuzz.csv"}
    answer = _refused_or_done(db, lambda: screening.add_curve(db, "boss", request), "curve")
    if answer is None:
        return
    with db.read_session() as session:
        points = session.scalars(select(SrCurve.points).where(SrCurve.name == name)).one()
    assert len(points) == len(rows)
    curve = Curve(tuple(CurvePoint(*p) for p in points))
    young, old = curve.span
    for start, end in curve.intervals(ratio, u):
        assert young - 1e-9 <= start <= end <= old + 1e-9
        assert math.isfinite(start) and math.isfinite(end)


TERMS = [
    "catalogNumber",
    "scientificName",
    "locality",
    "eventDate",
    "decimalLatitude",
    "ageMaxMa",
    "preparations",
    "habitat",
]


@st.composite
def manifests_(draw: st.DrawFn) -> tuple[list[str], list[list[str]]]:
    """A lender's list in Darwin Core terms with plausible values, then maybe spoiled."""
    header = ["catalogNumber", *draw(st.lists(st.sampled_from(TERMS[1:]), unique=True))]
    values = {
        "scientificName": st.sampled_from(["Lamniformes indet.", "Otodus sp."]),
        "locality": st.sampled_from(["Pit 1 (invented)", "Quarry (invented)"]),
        "eventDate": st.dates().map(str),
        "decimalLatitude": st.floats(-90, 90).map(repr),
        "ageMaxMa": st.floats(0, 4600).map(repr),
        "preparations": st.just("tooth"),
        "habitat": st.text(max_size=10),
    }
    rows = []
    for n in draw(st.lists(st.integers(1, 60), min_size=1, max_size=8, unique=True)):
        rows.append([f"INV {n}", *(draw(values[term]) for term in header[1:])])
    return header, draw(maybe_spoiled(rows))


@SERVICE
@given(document=manifests_())
def test_lender_manifests_refuse_or_account_for_every_row(
    bench: tuple[Database, str, str], document: tuple[list[str], list[list[str]]]
) -> None:
    db, _, _ = bench
    _count("lender manifest (service)")
    header, rows = document
    loan = make.loan(db)  # a fresh loan: every clean list creates all its rows
    content = csv_text([header, *rows])
    request = {"loan": loan, "filename": "fuzz.csv", "content": content}
    call = lambda: manifests.import_manifest(db, "boss", request)  # noqa: E731
    answer = _refused_or_done(db, call, "manifest")
    if answer is not None:
        # the rows as the standard library's csv module reads the same bytes (a cell with a
        # line feed in it, written unquoted, makes two lines); blank lines are not rows
        parsed = list(csv.reader(io.StringIO(content.decode("utf-8-sig"))))[1:]
        listed = [r for r in parsed if any(c.strip() for c in r)]
        assert len(answer.created) == len(listed)
        assert (answer.event_seq is None) == (not listed)


JSONISH = st.recursive(
    st.one_of(st.none(), st.booleans(), st.floats(), st.integers(), st.text(max_size=8)),
    lambda inner: st.one_of(
        st.lists(inner, max_size=3), st.dictionaries(st.text(max_size=8), inner, max_size=3)
    ),
    max_leaves=12,
)
HEADING = st.text(min_size=1, max_size=20).filter(lambda t: t.strip() == t and t)


@st.composite
def profiles(draw: st.DrawFn) -> dict[str, Any]:
    """A valid profile (own headings, ratios, format), then maybe values replaced by any JSON."""
    ratios = draw(
        st.dictionaries(
            st.sampled_from(["44/40", "44/42", "87/86", "43/44"]), HEADING, min_size=1, max_size=3
        )
    )
    columns: dict[str, Any] = {
        "run_order": draw(HEADING),
        "sample_name": draw(HEADING),
        "ratios": ratios,
    }
    profile: dict[str, Any] = {
        "format": draw(st.sampled_from(["csv", "tsv", "xlsx"])),
        "header_row": draw(st.integers(1, 100)),
        "columns": columns,
    }
    for _ in range(draw(st.integers(0, 2))):
        where = draw(st.sampled_from(["format", "header_row", "sheet", "bogus", "columns"]))
        if where == "columns":
            key = draw(st.sampled_from(["run_order", "sample_name", "ratios", "errors", "x"]))
            columns[key] = draw(JSONISH)
        else:
            profile[where] = draw(JSONISH)
    return profile


PROFILE_KEYS = profiles()


@SERVICE
@given(definition=PROFILE_KEYS)
def test_mapping_profiles_refuse_or_save(
    bench: tuple[Database, str, str], definition: dict[str, Any]
) -> None:
    db, _, _ = bench
    _count("mapping profile (service)")
    request = {"name": "fuzzed", "definition": definition}
    answer = _refused_or_done(db, lambda: sessions.save_profile(db, "tech", request), "profile")
    if answer is not None:
        assert answer.item.definition["columns"]["ratios"]
