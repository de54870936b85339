"""Ledger events as table rows, for the ledger screen and an item's custody history alike:
number, time, operator and item ID in their own columns; the action in words, with the name
people know the item by, in the last column, which wraps rather than being cut."""

from __future__ import annotations

from collections.abc import Sequence

from rich.text import Text
from textual.widgets import DataTable

from tracker.domain.text_rules import visible
from tracker.present.bars import words_cell
from tracker.services.core.views import EventView
from tracker.ui.plain import shown
from tracker.ui.widgets import flagged_rows
from tracker.ui.widgets.flagged_rows import FlaggedRow

COLUMNS = ("#", "when (UTC)", "who", "item")


def fill(
    table: DataTable[Text | str],
    events: Sequence[EventView],
    names: dict[str, str],
    width: int,
) -> None:
    """Replace ``table``'s rows with ``events``, each keyed by its sequence number."""
    rows = [
        FlaggedRow(
            str(e.seq),
            (str(e.seq), e.at.strftime("%Y-%m-%d %H:%M"), shown(e.operator), shown(e.object)),
            [action_words(e, names)],
        )
        for e in events
    ]
    flagged_rows.fill(table, COLUMNS, rows, width, last=("action", words_cell))


def action_words(event: EventView, names: dict[str, str]) -> str:
    """The action in words, then the name of its item: ``drilled · KFMNH P 20311``."""
    name = names.get(event.object)
    return visible(f"{event.said} · {name}" if name else event.said)


def named(ref: str, names: dict[str, str]) -> str:
    """An ID with the name people know it by, or the ID alone."""
    return f"{ref} {names[ref]}" if ref in names else ref
