"""Label stocks: the geometry of a sheet or roll, from the packaged presets or a lab's file.

A stock is a page size, a label size, the pitch from one label to the next,
the margins to the first label, and the grid (columns × rows), all in
millimetres. Every stock is validated before anything is drawn: a label
larger than its page, labels that overlap, or a grid that runs off the page
is refused with one line naming the stock, the field and the file.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import Annotated, Any, Literal

from pydantic import BaseModel, ConfigDict, Field, ValidationError, field_validator, model_validator

from tracker.domain.errors import InputError
from tracker.domain.text_rules import TextProblem, accept
from tracker.domain.textfiles import MAX_SETTINGS_BYTES, FileProblem, load_settings
from tracker.output.geometry import Box

STOCKS_ENV = "TRACKER_LABEL_STOCKS"
PRESETS = "stocks.toml"
# Edges that meet exactly (pitch == label size) must not count as an overlap or an overrun
# because of binary floating point; a micrometre is far below any printer's resolution.
TOLERANCE_MM = 1e-3
# The smallest QR module tracker prints: 0.25 mm is 2 dots of a 203 dpi thermal printer,
# the commonest label-printer resolution (common practice); one dot per module is too
# fragile. A version 1 symbol is then 5.25 mm, 7.25 mm with its 4-module quiet zone
# (ISO/IEC 18004 quiet zone from memory; sizes computed, see /work/shared/check-values.md).
MIN_MODULE_MM = 0.25

Mm = Annotated[float, Field(gt=0, le=2000)]
Spacing = Annotated[float, Field(ge=0, le=2000)]
Points = Annotated[float, Field(ge=4, le=72)]


class Stock(BaseModel):
    """One label stock; sizes in mm, origin at the page's top-left corner."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    name: Annotated[str, Field(min_length=1, max_length=60, pattern=r"^[A-Za-z0-9._-]+$")]
    source: str
    description: Annotated[str, Field(max_length=300)] = ""
    page_width_mm: Mm
    page_height_mm: Mm
    label_width_mm: Mm
    label_height_mm: Mm
    columns: Annotated[int, Field(ge=1, le=100)] = 1
    rows: Annotated[int, Field(ge=1, le=200)] = 1
    pitch_x_mm: Mm | None = None
    pitch_y_mm: Mm | None = None
    margin_left_mm: Spacing = 0.0
    margin_top_mm: Spacing = 0.0
    shape: Literal["rectangle", "round"] = "rectangle"
    layout: Literal["side", "stacked"] = "side"
    padding_mm: Spacing = 1.0
    id_pt: Points = 7.0
    text_pt: Points = 5.5
    max_module_mm: Annotated[float, Field(ge=MIN_MODULE_MM, le=5)] = 0.5
    error_correction: Literal["L", "M", "Q", "H"] = "M"

    @field_validator("description")
    @classmethod
    def _readable(cls, value: str) -> str:
        """A lab's description is shown in lists: judged like any text from outside."""
        try:
            return accept(value)
        except TextProblem as problem:
            raise ValueError(f"{problem.shown!r} {problem.reason}") from None

    @property
    def per_sheet(self) -> int:
        return self.columns * self.rows

    @property
    def step_x(self) -> float:
        return self.pitch_x_mm or self.label_width_mm

    @property
    def step_y(self) -> float:
        return self.pitch_y_mm or self.label_height_mm

    def cell(self, index: int) -> Box:
        """The ``index``-th label on a sheet (0-based, row by row)."""
        row, column = divmod(index, self.columns)
        return Box(
            self.margin_left_mm + column * self.step_x,
            self.margin_top_mm + row * self.step_y,
            self.label_width_mm,
            self.label_height_mm,
        )

    @property
    def page(self) -> Box:
        return Box(0.0, 0.0, self.page_width_mm, self.page_height_mm)

    @model_validator(mode="after")
    def _geometry(self) -> Stock:
        problem = _geometry_problem(self)
        if problem:
            raise ValueError(problem)
        return self


def _geometry_problem(stock: Stock) -> str | None:
    """Why the stock's labels cannot sit on its page, or None when they can."""
    w, h = stock.label_width_mm, stock.label_height_mm
    if w > stock.page_width_mm + TOLERANCE_MM or h > stock.page_height_mm + TOLERANCE_MM:
        return (
            f"label_width_mm/label_height_mm: a {w:g} × {h:g} mm label is larger than its "
            f"{stock.page_width_mm:g} × {stock.page_height_mm:g} mm page"
        )
    if stock.columns > 1 and stock.step_x < w - TOLERANCE_MM:
        return f"pitch_x_mm: {stock.step_x:g} mm is less than the label width {w:g} mm: overlap"
    if stock.rows > 1 and stock.step_y < h - TOLERANCE_MM:
        return f"pitch_y_mm: {stock.step_y:g} mm is less than the label height {h:g} mm: overlap"
    last = stock.cell(stock.per_sheet - 1)
    if last.right > stock.page_width_mm + TOLERANCE_MM:
        return f"columns: the last column ends at {last.right:g} mm, off the page's width"
    if last.bottom > stock.page_height_mm + TOLERANCE_MM:
        return f"rows: the last row ends at {last.bottom:g} mm, off the page's height"
    if stock.shape == "round" and (abs(w - h) > TOLERANCE_MM or stock.layout != "stacked"):
        return "shape: a round label needs equal width and height and layout = 'stacked'"
    if 2 * stock.padding_mm >= min(w, h):
        return f"padding_mm: {stock.padding_mm:g} mm on each side leaves no room on the label"
    return None


@dataclass(frozen=True)
class StockEntry:
    """A stock as written in a file, before validation."""

    name: str
    source: str
    table: dict[str, Any]


def _read_file(path: Path, label: str) -> dict[str, StockEntry]:
    """The stock tables of one TOML file; any problem is one line naming the file and place."""
    try:
        with path.open("rb") as handle:
            content = handle.read(MAX_SETTINGS_BYTES + 1)
    except FileNotFoundError:
        raise InputError("stocks", str(path), "no such file") from None
    except OSError as error:
        raise InputError("stocks", str(path), f"cannot be read ({error.strerror})") from None
    try:
        data = load_settings(content, ".toml")
    except FileProblem as problem:
        where = f"row {problem.row}, column {problem.column}"
        raise InputError("stocks", str(path), f"{where}: {problem.reason}") from None
    tables = data.get("stock", {})
    if not isinstance(tables, dict) or not all(isinstance(t, dict) for t in tables.values()):
        raise InputError("stocks", str(path), "write each stock as a table: [stock.NAME]")
    return {name: StockEntry(name, label, dict(table)) for name, table in tables.items()}


def _presets() -> dict[str, StockEntry]:
    path = Path(str(resources.files("tracker.output") / PRESETS))
    return _read_file(path, "preset")


def user_file(given: Path | None) -> Path | None:
    """The lab's stocks file: the option if given, else $TRACKER_LABEL_STOCKS, else none."""
    if given is not None:
        return given
    env = os.environ.get(STOCKS_ENV)
    return Path(env) if env else None


def entries(stocks_file: Path | None = None) -> dict[str, StockEntry]:
    """Every stock by name; the lab's own file wins over a preset of the same name."""
    found = _presets()
    path = user_file(stocks_file)
    if path is not None:
        found.update(_read_file(path, str(path)))
    return found


def validate(entry: StockEntry) -> Stock:
    """The stock, or a one-line refusal naming it, the field and where it was written."""
    try:
        return Stock.model_validate({**entry.table, "name": entry.name, "source": entry.source})
    except ValidationError as exc:
        first = exc.errors(include_url=False)[0]
        where = ".".join(str(part) for part in first["loc"])
        message = first["msg"].removeprefix("Value error, ")
        reason = f"{where}: {message}" if where else message
        raise InputError("stock", entry.name, f"{reason} (stock from {entry.source})") from None


def load_stock(name: str, stocks_file: Path | None = None) -> Stock:
    """The named stock, validated; an unknown name lists the known ones."""
    known = entries(stocks_file)
    if name not in known:
        raise InputError("stock", name, f"no such stock; known: {', '.join(sorted(known))}")
    return validate(known[name])


def check_start(stock: Stock, start: int) -> None:
    """Refuse a start position that is not on the sheet (positions run from 1, row by row)."""
    if not 1 <= start <= stock.per_sheet:
        raise InputError(
            "start",
            start,
            f"is past the sheet: {stock.name} has positions 1 to {stock.per_sheet} "
            f"({stock.columns} × {stock.rows})",
        )
