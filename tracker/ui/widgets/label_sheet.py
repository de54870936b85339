"""A label stock drawn in the terminal: the sheet's grid, each cell showing the ID it will
carry on the first page, ``×`` for positions already used (before the start), ``·`` free."""

from __future__ import annotations

from rich.text import Text

from tracker.output.layout import Page
from tracker.output.stocks import Stock

USED, FREE = "×", "·"


def sheet_text(stock: Stock, page: Page | None, start: int, width: int = 76) -> Text:
    slots: dict[int, str] = {}
    for label in page.labels if page else ():
        column = round((label.cell.x - stock.margin_left_mm) / stock.step_x)
        row = round((label.cell.y - stock.margin_top_mm) / stock.step_y)
        slots[row * stock.columns + column] = label.facts.item
    cell = max(4, min(13, width // stock.columns))
    text = Text()
    text.append(
        f"{stock.name}: {stock.columns} × {stock.rows} labels of "
        f"{stock.label_width_mm:g} × {stock.label_height_mm:g} mm ({stock.shape})\n",
        style="bold",
    )
    for row in range(stock.rows):
        for column in range(stock.columns):
            index = row * stock.columns + column
            if index in slots:
                shown, style = slots[index][: cell - 1], "bold"
            elif index < start - 1:
                shown, style = USED, "dim"
            else:
                shown, style = FREE, "dim"
            text.append(shown.ljust(cell), style=style)
        text.append("\n")
    text.append(f"{USED} already used (before start {start}) · {FREE} left empty", style="dim")
    return text
