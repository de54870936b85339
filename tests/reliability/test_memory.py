"""Memory bounded by the file: every importer, `show`, label previews and the return report,
each measured in a child process (tests/reliability/peak.py).

Each large file is built here (tens of megabytes; invented rows). A command's cost is its
child's peak resident memory less the peak of a child that only imports what the command
imports. Importers read one row at a time and keep compact values, so that cost stays
within a small multiple of the file; where a file is refused at a cap part-way through,
the cost is a fraction of the file; where what is kept has a fixed bound (runs in a
session, pixels in a photograph), the cost stays within that bound.
"""

from __future__ import annotations

import sqlite3
import zipfile
from pathlib import Path

import pytest

from tests.cli.conftest import copy_sqlite, invoke, ok_json
from tests.reliability import big_files as big
from tests.reliability.bench import Bench, session_import
from tests.reliability.peak import Measured, baseline, file_mib, measure, tracker
from tests.reliability.report import record

pytestmark = pytest.mark.slow
# What a command may cost beyond its imports whatever the file: a database session,
# SQLAlchemy's statement caches, the interpreter's own arenas (common practice: tens of MB).
FIXED_MIB = 40.0


@pytest.fixture(scope="module")
def bench_profile() -> str:
    """The exports here carry two ratios and their errors."""
    return big.EXPORT_PROFILE


def _within(
    importer: str, size: str, measured: Measured, base: float, file: float, factor: float
) -> None:
    """The command's cost is at most ``factor`` × the file (plus FIXED_MIB); one table row."""
    cost = measured.peak_mib - base
    record(
        f"peak memory of {importer}",
        size,
        f"{cost:.0f} MB above a bare start ({measured.peak_mib:.0f} MB peak) for "
        f"{file:.1f} MB of file: {cost / file:.1f} × (bound {factor:g} × + {FIXED_MIB:g} MB)",
    )
    assert cost <= factor * file + FIXED_MIB, (importer, cost, file, measured.stderr)


def _imports(*modules: str) -> float:
    return baseline(*modules)


# ---------------------------------------------------------------- lender manifests

# The import's one ledger event states every row it made (each value with its column's
# name, the extra terms with theirs): its payload, at most STATED × the file, is held a few
# times while it is written, hashed and stored (the text, the hashed bytes, the driver's copy
# and the event's row): COPIES × STATED × the file more than the reading alone costs.
STATED, COPIES = 3.0, 4


def _stated_mib(path: Path) -> float:
    """The payload of the newest event (the import's), read with sqlite3."""
    with sqlite3.connect(path) as connection:
        query = "SELECT length(payload) FROM custody_event ORDER BY seq DESC LIMIT 1"
        (size,) = connection.execute(query).fetchone()
    return float(size) / 1024**2


def test_a_lender_list_costs_a_small_multiple_of_its_csv(bench: Bench, tmp_path: Path) -> None:
    rows = 40_000
    path = big.write_csv(tmp_path / "lender.csv", big.lender_rows(rows))
    base = _imports("tracker.services.loans.manifests")
    done = measure(tracker(bench.path, "manifest", "import", "FH-77", str(path), actor="ysolde"))
    assert done.exit_code == 0, done.stderr
    size = f"{rows:,} rows × {len(big.SPECIMEN_TERMS + big.EXTRA_TERMS)} columns, imported"
    assert _stated_mib(bench.path) <= STATED * file_mib(path)
    _within("a lender list (CSV)", size, done, base, file_mib(path), 8 + COPIES * STATED)


def test_a_lender_list_costs_a_small_multiple_of_its_workbook(bench: Bench, tmp_path: Path) -> None:
    rows = 15_000
    path = big.write_workbook(tmp_path / "lender.xlsx", big.lender_rows(rows))
    with zipfile.ZipFile(path) as book:  # what openpyxl reads: the parts, unpacked
        unpacked = sum(part.file_size for part in book.infolist()) / 1024**2
    base = _imports("tracker.services.loans.manifests", "openpyxl", "tracker.domain.workbooks")
    done = measure(tracker(bench.path, "manifest", "import", "FH-77", str(path), actor="ysolde"))
    assert done.exit_code == 0, done.stderr
    size = f"{rows:,} rows, {file_mib(path):.1f} MB workbook unpacking to {unpacked:.0f} MB"
    assert _stated_mib(bench.path) <= STATED * unpacked
    factor = 4 + COPIES * STATED
    _within("a lender list (XLSX, against its unpacked parts)", size, done, base, unpacked, factor)


def test_a_list_over_the_cell_cap_is_refused_before_it_is_read_whole(
    bench: Bench, tmp_path: Path
) -> None:
    """The 44,000-row, 1,000-column list that once took gigabytes: refused at the cap."""
    path = tmp_path / "wide.csv"
    header = big.SPECIMEN_TERMS + [f"lenderField{i}" for i in range(1000 - len(big.SPECIMEN_TERMS))]
    rows = (
        [f"SYN W {n}", *(f"v{n % 97}-{i}" for i in range(len(header) - 1))] for n in range(1, 4_001)
    )
    big.write_csv(path, iter([header, *rows]))
    base = _imports("tracker.services.loans.manifests")
    done = measure(tracker(bench.path, "manifest", "preview", "FH-77", str(path)))
    assert done.exit_code == 2 and "capped at 2,000,000 cells" in done.stderr, done.stderr
    size = "4,000 rows × 1,000 columns (4 million cells), refused at 2,000,000"
    _within("a list over the cell cap (CSV)", size, done, base, file_mib(path), factor=3)


# ---------------------------------------------------------------- instrument exports


def test_a_session_at_its_run_cap_costs_a_fixed_bound(bench: Bench, tmp_path: Path) -> None:
    from tracker.services.instrument.sessions import MAX_SESSION_ROWS

    path = big.write_csv(tmp_path / "export.csv", big.export_rows(MAX_SESSION_ROWS))
    base = _imports("tracker.services.instrument.sessions")
    argv = session_import(path, "csv")
    done = measure(tracker(bench.path, *argv, actor=bench.lab.technician))
    assert done.exit_code == 0, done.stderr
    cost = done.peak_mib - base
    bound = MAX_SESSION_ROWS * 10 / 1024  # each run one measurement row: at most 10 KiB each
    record(
        "peak memory of an instrument export (CSV) at the run cap",
        f"{MAX_SESSION_ROWS:,} runs, {file_mib(path):.1f} MB",
        f"{cost:.0f} MB above a bare start (bound {bound:.0f} MB: 10 KiB a run)",
    )
    assert cost <= bound, (cost, bound)


@pytest.mark.parametrize("fmt", ["csv", "xlsx"])
def test_an_export_beyond_the_run_cap_costs_a_fraction_of_the_file(
    bench: Bench, tmp_path: Path, fmt: str
) -> None:
    rows = 200_000 if fmt == "csv" else 100_000
    path = tmp_path / f"export.{fmt}"
    if fmt == "csv":
        big.write_csv(path, big.export_rows(rows))
    else:
        big.write_workbook(path, big.export_rows(rows))
    base = _imports(
        "tracker.services.instrument.sessions", *(["openpyxl"] if fmt == "xlsx" else [])
    )
    argv = session_import(path, fmt)
    done = measure(tracker(bench.path, *argv, actor=bench.lab.technician))
    assert done.exit_code == 2 and "capped at 20,000 runs" in done.stderr, done.stderr
    size = f"{rows:,} runs, {file_mib(path):.1f} MB, refused at the 20,000-run cap"
    factor = 3 if fmt == "csv" else 8  # a workbook's XML is several times its ZIP
    _within(f"an instrument export ({fmt.upper()})", size, done, base, file_mib(path), factor)


# ---------------------------------------------------------------- batch sheets and curves


def test_a_batch_sheet_beyond_any_batch_costs_a_fraction_of_the_file(
    bench: Bench, tmp_path: Path
) -> None:
    rows = ([str(n), "blank", "", "", "0.05 ug"] for n in range(1, 300_001))
    path = big.write_csv(
        tmp_path / "sheet.csv", iter([["slot", "kind", "item", "loaded", "Ca"], *rows])
    )
    base = _imports("tracker.services.bench.batch_sheet")
    done = measure(tracker(bench.path, "batch", "sheet", bench.batch, str(path), actor="bram"))
    assert done.exit_code == 2 and "at most 10,000 columns" in done.stderr, done.stderr
    size = f"300,000 rows, {file_mib(path):.1f} MB, refused at the 10,000-column batch"
    _within("a batch sheet (CSV)", size, done, base, file_mib(path), factor=3)


def test_a_reference_curve_costs_a_small_multiple_of_its_file(bench: Bench, tmp_path: Path) -> None:
    from tracker.domain.srcurve import MAX_POINTS

    points = MAX_POINTS - 1  # the header is one of the rows the cap counts
    rows = (
        [f"{n / 1000:.3f}", f"0.70{n % 9000 + 1000:04d}", "0.00003"] for n in range(1, points + 1)
    )
    path = big.write_csv(tmp_path / "curve.csv", iter([["age_ma", "87sr/86sr", "u"], *rows]))
    base = _imports("tracker.services.instrument.screening")
    done = measure(tracker(bench.path, "curve", "add", "memory", str(path), actor="ysolde"))
    assert done.exit_code == 0, done.stderr
    cost = done.peak_mib - base
    bound = MAX_POINTS * 0.6 / 1024  # at most 0.6 KiB a point, whatever the file's spelling
    record(
        "peak memory of a Sr reference curve at the point cap",
        f"{points:,} points, {file_mib(path):.1f} MB",
        f"{cost:.0f} MB above a bare start (bound {bound:.0f} MB: 0.6 KiB a point)",
    )
    assert cost <= bound, (cost, bound)


# ---------------------------------------------------------------- show, previews, reports


def test_show_of_a_loan_does_not_load_its_specimens_extra_terms(
    bench: Bench, tmp_path: Path
) -> None:
    """The same 12,000 specimens with and without 19 extra terms each: `show` never loads the
    specimens' extra terms, only the manifest event that states them is read by the database
    to leave its facts out of the loan's history (SQLite parses it: a few × what it states)."""
    rows = list(big.lender_rows(12_000))
    width = len(big.SPECIMEN_TERMS)
    plain = [row[:width] for row in rows]
    costs = {}
    for name, table in (("with", rows), ("without", plain)):
        db = copy_sqlite(bench.path, tmp_path / f"{name}.sqlite")
        path = big.write_csv(tmp_path / f"{name}.csv", iter(table))
        ok_json(
            invoke("manifest", "import", "FH-77", str(path), db=db, actor="ysolde", as_json=True)
        )
        done = measure(tracker(db, "show", "FH-77"))
        assert done.exit_code == 0, done.stderr
        costs[name] = done.peak_mib
    with sqlite3.connect(tmp_path / "with.sqlite") as connection:
        stored = connection.execute("SELECT sum(length(extra)) FROM specimen").fetchone()[0]
    extras = stored / 1024**2
    more = costs["with"] - costs["without"]
    record(
        "peak memory of `show` of a loan with many extra terms",
        f"12,000 specimens, {extras:.1f} MB of extra terms stored",
        f"{more:+.1f} MB against the same loan without them ({costs['with']:.0f} MB peak)",
    )
    assert more <= 4 * extras, (more, extras)


def test_a_label_preview_costs_its_pixels_and_a_giant_one_nothing(
    bench: Bench, tmp_path: Path
) -> None:
    from tracker.domain.labels import MAX_PREVIEW_PIXELS

    item = bench.lab.on_hand
    base = _imports("tracker.output.jobs", "PIL.Image")
    a4 = ["labels", "preview", item, "--stock", "a4-65", "--dpi", "1200"]
    done = measure(tracker(bench.path, *a4, "--out", str(tmp_path / "a4.png")))
    assert done.exit_code == 0, done.stderr
    cost = done.peak_mib - base
    bound = 1.5 * MAX_PREVIEW_PIXELS / 1024**2 + FIXED_MIB  # grey: one byte a pixel, and PNG
    stocks = tmp_path / "stocks.toml"
    stocks.write_text(big.WALL_STOCK, encoding="utf-8")
    wall = ["labels", "preview", item, "--stock", "wall", "--stocks", str(stocks), "--dpi", "1200"]
    refused = measure(tracker(bench.path, *wall, "--out", str(tmp_path / "wall.png")))
    assert refused.exit_code == 2 and "capped at 150,000,000 pixels" in refused.stderr
    record(
        "peak memory of a label preview",
        "A4 sheet at 1200 dpi (139 million pixels); a 2 × 1.9 m stock at 1200 dpi",
        f"{cost:.0f} MB above a bare start (bound {bound:.0f} MB); the giant one refused at "
        f"{refused.peak_mib - base:.0f} MB",
    )
    assert cost <= bound and refused.peak_mib - base <= FIXED_MIB, (cost, refused.peak_mib)


def test_the_return_report_draws_a_large_photograph_from_a_small_decode(
    bench: Bench, tmp_path: Path
) -> None:
    photo = big.noisy_jpeg(tmp_path / "crown.jpg", 8000, 6000)  # 48 megapixels
    args = ("specimen", "photo", bench.lab.on_hand, str(photo))
    ok_json(invoke(*args, db=bench.path, actor=bench.lab.technician, as_json=True))
    base = _imports("tracker.output.report_files", "tracker.output.report_pdf")
    report = ["report", "return", "FH-77", "--out", str(tmp_path / "fh.pdf")]
    done = measure(tracker(bench.path, *report, actor="ysolde"))
    assert done.exit_code == 0, done.stderr
    size = f"one 8000 × 6000 JPEG of {file_mib(photo):.1f} MB (144 MB decoded)"
    _within("the return report with a photograph", size, done, base, file_mib(photo), factor=3)
