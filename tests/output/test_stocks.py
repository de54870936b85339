"""Label stocks: presets are valid and sit on their pages; bad stocks are refused in one line."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import TypedDict

import pytest

from tracker.domain.errors import InputError
from tracker.output.stocks import (
    MIN_MODULE_MM,
    STOCKS_ENV,
    check_start,
    entries,
    load_stock,
    validate,
)

PRESETS = sorted(entries())
A4_MM = (210.0, 297.0)  # ISO 216 (from memory)
LETTER_MM = (215.9, 279.4)  # US Letter, 8.5 × 11 in at 25.4 mm/in


def test_the_presets_the_labs_need_are_there() -> None:
    # the container kinds a lab labels (common practice): vials, caps, bags, office sheets
    assert {"cryovial-wrap", "cap-dot", "specimen-bag", "a4-65", "a4-24", "letter-30"} <= set(
        PRESETS
    )


@pytest.mark.parametrize("name", PRESETS)
def test_every_preset_is_valid_and_every_cell_lies_on_its_page(name: str) -> None:
    stock = load_stock(name)
    assert stock.source == "preset"
    cells = [stock.cell(i) for i in range(stock.per_sheet)]
    assert all(cell.within(stock.page) for cell in cells)
    for i, a in enumerate(cells):  # no two labels overlap
        for b in cells[i + 1 :]:
            assert (
                a.right <= b.x + 1e-9
                or b.right <= a.x + 1e-9
                or a.bottom <= b.y + 1e-9
                or (b.bottom <= a.y + 1e-9)
            )
    assert stock.max_module_mm >= MIN_MODULE_MM


def test_sheet_presets_use_the_standard_paper_sizes() -> None:
    assert (load_stock("a4-65").page_width_mm, load_stock("a4-65").page_height_mm) == A4_MM
    assert (load_stock("a4-24").page_width_mm, load_stock("a4-24").page_height_mm) == A4_MM
    page = load_stock("letter-30")
    assert (page.page_width_mm, page.page_height_mm) == pytest.approx(LETTER_MM)


def _user_file(tmp_path: Path, body: str) -> Path:
    path = tmp_path / "stocks.toml"
    path.write_text(body, encoding="utf-8")
    return path


GOOD = """
[stock.{name}]
page_width_mm = 100
page_height_mm = 50
label_width_mm = {w}
label_height_mm = 20
columns = {columns}
rows = 2
pitch_x_mm = {pitch}
margin_left_mm = 1
margin_top_mm = 2
{extra}
"""


class StockChange(TypedDict, total=False):
    """What a test changes in the GOOD stock (the keywords of _stock)."""

    name: str
    w: float
    columns: int
    pitch: float
    extra: str


def _stock(
    tmp_path: Path,
    *,
    name: str = "bench",
    w: float = 30,
    columns: int = 3,
    pitch: float = 32,
    extra: str = "",
) -> Path:
    text = GOOD.format(name=name, w=w, columns=columns, pitch=pitch, extra=extra)
    return _user_file(tmp_path, text)


def test_a_lab_stock_is_read_and_its_grid_placed(tmp_path: Path) -> None:
    stock = load_stock("bench", _stock(tmp_path))
    assert stock.per_sheet == 6
    # hand arithmetic: third column starts at 1 + 2 × 32 mm, second row at 2 + 20 mm
    last = stock.cell(5)
    assert (last.x, last.y, last.w, last.h) == (65, 22, 30, 20)


def test_a_lab_stock_overrides_a_preset_of_the_same_name(tmp_path: Path) -> None:
    stock = load_stock("a4-65", _stock(tmp_path, name="a4-65"))
    assert stock.page_width_mm == 100 and stock.source.endswith("stocks.toml")


def test_the_stocks_file_may_come_from_the_environment(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv(STOCKS_ENV, str(_stock(tmp_path)))
    assert load_stock("bench").per_sheet == 6


def _refusal(call: Callable[[], object]) -> InputError:
    with pytest.raises(InputError) as caught:
        call()
    message = caught.value.one_line()
    assert "\n" not in message
    return caught.value


@pytest.mark.parametrize(
    ("kwargs", "fragment"),
    [
        ({"w": 120, "columns": 1}, "larger than its"),
        ({"pitch": 25}, "pitch_x_mm: 25 mm is less than the label width 30 mm: overlap"),
        ({"pitch": 40}, "columns: the last column ends at 111 mm, off the page's width"),
        ({"extra": 'shape = "round"'}, "round label needs equal width and height"),
        ({"extra": "padding_mm = 10"}, "leaves no room"),
        ({"extra": "max_module_mm = 0.2"}, "max_module_mm"),
        ({"extra": "id_pt = 2"}, "id_pt"),
        ({"extra": "colour = 'red'"}, "colour"),
        ({"extra": 'error_correction = "X"'}, "error_correction"),
    ],
)
def test_a_bad_stock_is_refused_naming_stock_field_and_file(
    tmp_path: Path, kwargs: StockChange, fragment: str
) -> None:
    path = _stock(tmp_path, **kwargs)
    error = _refusal(lambda: load_stock("bench", path))
    assert (error.field, error.value) == ("stock", "bench")
    assert fragment in error.reason and str(path) in error.reason


def test_an_unknown_stock_lists_the_known_ones() -> None:
    error = _refusal(lambda: load_stock("a5-99"))
    assert (error.field, error.value) == ("stock", "a5-99")
    assert all(name in error.reason for name in PRESETS)


def test_a_broken_or_missing_file_is_named(tmp_path: Path) -> None:
    broken = _user_file(tmp_path, "[stock.x\npage_width_mm = 1")
    assert "not valid TOML" in _refusal(lambda: entries(broken)).reason
    missing = tmp_path / "nope.toml"
    error = _refusal(lambda: entries(missing))
    assert (error.field, error.value, error.reason) == ("stocks", str(missing), "no such file")


@pytest.mark.parametrize("start", [0, -1, 66, 1000])
def test_a_start_position_off_the_sheet_is_refused(start: int) -> None:
    stock = load_stock("a4-65")  # 5 × 13 = 65 positions
    error = _refusal(lambda: check_start(stock, start))
    assert (error.field, error.value) == ("start", start)
    assert "past the sheet" in error.reason and "1 to 65" in error.reason


@pytest.mark.parametrize("start", [1, 65])
def test_the_first_and_last_positions_are_on_the_sheet(start: int) -> None:
    check_start(load_stock("a4-65"), start)


def test_every_stock_entry_validates_on_its_own(tmp_path: Path) -> None:
    """One broken lab stock does not block the presets (each stock is checked when used)."""
    path = _user_file(tmp_path, GOOD.format(name="bad", w=30, columns=3, pitch=10, extra=""))
    found = entries(path)
    assert load_stock("a4-65", path).name == "a4-65"
    with pytest.raises(InputError, match="overlap"):
        validate(found["bad"])
