"""Every cap on what a file may ask: just under it is accepted, just over it is refused.

Each refusal goes through the command line (CliRunner with catch_exceptions=False, so a
traceback fails the test): exit 2, one line on stderr naming the file or option, the
file's own figure and the cap, and every table as it was. Each cap is the constant the
code uses, imported here, so a test follows the cap if it is ever moved.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from functools import partial
from pathlib import Path

import pytest
from typer.testing import Result

from tests.cli.conftest import Lab, counts, invoke, ok_json
from tests.reliability import big_files as big
from tests.reliability.bench import Bench, session_import
from tests.reliability.report import record
from tracker.domain.darwincore import MAX_EXTRA_CHARS, MAX_EXTRA_TERMS
from tracker.domain.labels import MAX_PREVIEW_PIXELS
from tracker.domain.photos import MAX_PHOTO_PIXELS
from tracker.domain.spreadsheets import MAX_CELLS
from tracker.domain.workbooks import MAX_SHARED_CHARS, MAX_SHARED_STRINGS
from tracker.services.bench.batch_sheet import MAX_SLOT
from tracker.services.instrument.sessions import MAX_SESSION_ROWS

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def bench_profile() -> str:
    """The exports here carry two ratios and their errors."""
    return big.EXPORT_PROFILE


@pytest.fixture
def lab_db(lab: Lab) -> Path:
    """The CLI tests' small lab (loan FH-77 open), a fresh copy for each test."""
    return lab.path


def _refused(db: Path, call: Callable[[], Result], path: Path, *words: str) -> str:
    """Exit 2, one line, no traceback, naming ``path``'s file and every word; every table
    of ``db`` as it was before the call."""
    before = counts(db)
    result = call()
    assert counts(db) == before
    assert result.exit_code == 2, (result.exit_code, result.stdout, result.stderr)
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: "), result.stderr
    assert "Traceback" not in result.stderr + result.stdout
    for word in (path.name, *words):
        assert word in lines[0], (word, lines[0])
    return lines[0].removeprefix("error: ")


def _manifest(db: Path, path: Path, command: str = "import") -> Result:
    return invoke("manifest", command, "FH-77", str(path), db=db, actor="ysolde", as_json=True)


def _refused_list(db: Path, path: Path, *words: str) -> str:
    """The lender's list at ``path`` refused on import (see _refused)."""
    return _refused(db, partial(_manifest, db, path), path, *words)


def _cap(name: str, under: str, over: str, said: str) -> None:
    record(f"cap: {name}", f"just under ({under}) accepted; just over ({over}) refused", said)
    assert "Traceback" not in said


# ---------------------------------------------------------------- tables


def _wide_rows(rows: int, columns: int) -> Iterator[list[str]]:
    yield ["catalogNumber", *(f"lenderField{i}" for i in range(1, columns))]
    for n in range(1, rows + 1):
        yield [f"SYN C {n}", *(f"v{i}" for i in range(1, columns))]


def test_cells_in_a_file(lab_db: Path, tmp_path: Path) -> None:
    columns = MAX_EXTRA_TERMS  # the catalogue number and as many extra terms as a row may keep
    rows = MAX_CELLS // columns - 1  # the header's cells count too
    under = big.write_csv(tmp_path / "under.csv", _wide_rows(rows, columns))
    preview = ok_json(_manifest(lab_db, under, "preview"))
    assert (preview["create"], preview["problems"]) == (rows, 0)
    over = big.write_csv(tmp_path / "over.csv", _wide_rows(rows + 1, columns))
    figure = f"{(rows + 2) * columns:,} cells"
    said = _refused_list(lab_db, over, figure, f"capped at {MAX_CELLS:,} cells")
    _cap("cells in one file", f"{MAX_CELLS:,} cells", figure, said)


def test_extra_terms_in_a_row(lab_db: Path, tmp_path: Path) -> None:
    def one_row(filled: int) -> Path:
        header = ["catalogNumber", *(f"lenderField{i}" for i in range(filled))]
        row = ["SYN E 1", *(f"value {i}" for i in range(filled))]
        return big.write_csv(tmp_path / f"extra-{filled}.csv", iter([header, row]))

    over = one_row(MAX_EXTRA_TERMS + 1)
    figure = f"{MAX_EXTRA_TERMS + 1:,} filled"
    cap = f"capped at {MAX_EXTRA_TERMS:,} extra terms"
    said = _refused_list(lab_db, over, "row 2", figure, cap)
    assert len(ok_json(_manifest(lab_db, one_row(MAX_EXTRA_TERMS)))["created"]) == 1
    _cap("extra terms in a row", f"{MAX_EXTRA_TERMS}", f"{MAX_EXTRA_TERMS + 1}", said)


def test_characters_of_extra_terms_in_a_row(lab_db: Path, tmp_path: Path) -> None:
    term = "occurrenceRemarks"

    def remark(size: int) -> Path:  # the term's name and value together make ``size``
        row = ["SYN R 1", "r" * (size - len(term))]
        return big.write_csv(tmp_path / f"remark-{size}.csv", iter([["catalogNumber", term], row]))

    over = remark(MAX_EXTRA_CHARS + 1)
    figure = f"{MAX_EXTRA_CHARS + 1:,} characters"
    cap = f"capped at {MAX_EXTRA_CHARS:,} characters"
    said = _refused_list(lab_db, over, "row 2", figure, cap)
    assert len(ok_json(_manifest(lab_db, remark(MAX_EXTRA_CHARS)))["created"]) == 1
    _cap("characters of extra terms in a row", f"{MAX_EXTRA_CHARS:,}", "one more", said)


# ---------------------------------------------------------------- workbooks


ROWS = [["catalogNumber", "locality"], ["SYN X 1", "Synthetic pit (invented)"]]


def test_shared_strings_in_a_workbook(lab_db: Path, tmp_path: Path) -> None:
    used = len({text for row in ROWS for text in row})

    def book(entries: int) -> Path:
        padding = (f"unused {i}" for i in range(entries - used))
        path = big.write_workbook(tmp_path / f"strings-{entries}.xlsx", ROWS, padding)
        assert big.shared_strings(path)[0] == entries
        return path

    over = book(MAX_SHARED_STRINGS + 1)
    said = _refused_list(lab_db, over, f"capped at {MAX_SHARED_STRINGS:,} shared")
    assert len(ok_json(_manifest(lab_db, book(MAX_SHARED_STRINGS)))["created"]) == 1
    _cap("shared strings in a workbook", f"{MAX_SHARED_STRINGS:,}", "one more", said)


def test_characters_of_shared_strings_in_a_workbook(lab_db: Path, tmp_path: Path) -> None:
    used = sum(len(text) for text in {text for row in ROWS for text in row})
    piece = 32_768  # a spreadsheet cell's longest text (common practice: Excel's limit - 1)

    def book(chars: int) -> Path:
        whole, rest = divmod(chars - used, piece)
        padding = [*(f"{n:08d}" + "x" * (piece - 8) for n in range(whole)), "y" * rest]
        path = big.write_workbook(tmp_path / f"chars-{chars}.xlsx", ROWS, padding)
        assert big.shared_strings(path)[1] == chars
        return path

    over = book(MAX_SHARED_CHARS + 1)
    figure = f"{MAX_SHARED_CHARS + 1:,} characters"
    said = _refused_list(lab_db, over, figure, f"capped at {MAX_SHARED_CHARS:,}")
    assert len(ok_json(_manifest(lab_db, book(MAX_SHARED_CHARS)))["created"]) == 1
    _cap("characters of shared strings in a workbook", f"{MAX_SHARED_CHARS:,}", "one more", said)


# ---------------------------------------------------------------- instrument sessions, batches


def test_runs_in_a_session(bench: Bench, tmp_path: Path) -> None:
    def export(rows: int) -> Path:
        return big.write_csv(tmp_path / f"runs-{rows}.csv", big.export_rows(rows))

    def session(path: Path) -> Result:
        args = session_import(path, "csv")
        return invoke(*args, db=bench.path, actor=bench.lab.technician, as_json=True)

    over = export(MAX_SESSION_ROWS + 1)
    said = _refused(
        bench.path, partial(session, over), over, f"capped at {MAX_SESSION_ROWS:,} runs"
    )
    assert ok_json(session(export(MAX_SESSION_ROWS)))["item"]["measurements"] == MAX_SESSION_ROWS
    _cap("runs in an instrument session", f"{MAX_SESSION_ROWS:,}", "one more", said)


def test_rows_of_a_batch_sheet(bench: Bench, tmp_path: Path) -> None:
    """More rows than a batch may hold columns are refused as they are read; a sheet at the
    cap is read whole and goes on to the rows' own checks (here a column listed twice)."""

    def sheet(rows: int) -> Path:
        lines = ([str(n), "blank", "", "", "0.05 ug"] for n in [1, *range(1, rows)])
        header = ["slot", "kind", "item", "loaded", "Ca"]
        return big.write_csv(tmp_path / f"sheet-{rows}.csv", iter([header, *lines]))

    def enter(path: Path) -> Result:
        args = ("batch", "sheet", bench.batch, str(path))
        return invoke(*args, db=bench.path, actor=bench.lab.technician)

    over = sheet(MAX_SLOT + 1)
    said = _refused(bench.path, partial(enter, over), over, f"at most {MAX_SLOT:,} columns")
    under = sheet(MAX_SLOT)
    words = ("row 3", "listed on row 2 too")  # read whole, then checked
    _refused(bench.path, partial(enter, under), under, *words)
    _cap("rows of a batch sheet", f"{MAX_SLOT:,}, read whole", "one more", said)


# ---------------------------------------------------------------- label previews and photographs


def test_pixels_of_a_label_preview(lab: Lab, tmp_path: Path) -> None:
    stocks = tmp_path / "stocks.toml"
    stocks.write_text(  # at 254 dpi a millimetre is ten pixels: 10,000 × 15,000 pixels
        "[stock.poster]\npage_width_mm = 1000.0\npage_height_mm = 1500.0\n"
        "label_width_mm = 60.0\nlabel_height_mm = 30.0\n",
        encoding="utf-8",
    )
    assert MAX_PREVIEW_PIXELS == 10_000 * 15_000

    def preview(dpi: int) -> Result:
        out = tmp_path / f"poster-{dpi}.png"
        args = ("labels", "preview", lab.on_hand, "--stock", "poster", "--stocks", str(stocks))
        return invoke(*args, "--dpi", str(dpi), "--out", str(out), db=lab.path)

    result = preview(255)  # the option is named, not a file: the refusal is checked here
    assert result.exit_code == 2 and "Traceback" not in result.stderr + result.stdout
    (line,) = result.stderr.strip().splitlines()
    for word in ("--dpi", "255", "10,039 × 15,059", f"capped at {MAX_PREVIEW_PIXELS:,} pixels"):
        assert word in line, (word, line)
    said = line.removeprefix("error: ")
    assert not list(tmp_path.glob("*poster-255*"))  # nothing drawn, nothing staged
    assert preview(254).exit_code == 0 and (tmp_path / "poster-254.png").exists()
    _cap("pixels of a label preview", f"{MAX_PREVIEW_PIXELS:,}", "255 dpi", said)


def test_pixels_of_a_photograph(lab: Lab, tmp_path: Path) -> None:
    def photo(width: int, height: int) -> Path:
        path = tmp_path / f"photo-{width}x{height}.jpg"
        path.write_bytes(big.jpeg_claiming(width, height))
        return path

    def attach(path: Path) -> Result:
        args = ("specimen", "photo", lab.on_hand, str(path))
        return invoke(*args, db=lab.path, actor=lab.technician, as_json=True)

    cap = f"capped at {MAX_PHOTO_PIXELS:,} pixels"
    over = photo(10_001, 8_000)
    said = _refused(lab.path, partial(attach, over), over, "80,008,000 pixels", cap)
    huge = photo(16_000, 16_000)  # beyond Pillow's own limit: its error never shows
    _refused(lab.path, partial(attach, huge), huge, "more than", cap)
    assert MAX_PHOTO_PIXELS == 10_000 * 8_000
    ok_json(attach(photo(10_000, 8_000)))
    _cap("pixels of a photograph", f"{MAX_PHOTO_PIXELS:,}", "10,001 × 8,000", said)
