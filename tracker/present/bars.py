"""Text bars for allowances and yields, and flags: the number is always written beside the
bar, an excess and every flag are marked with a symbol and words, so no meaning rests on
colour. Shared by the CLI's tables and the interface's screens."""

from __future__ import annotations

from collections.abc import Sequence

from rich.text import Text

from tracker.domain.precision import number

FULL, EMPTY = "█", "░"


def usage_bar(fraction: float | None, width: int = 10) -> Text:
    """``███████░░░  72 %``; past 100 % the bar is full and ends in ✗."""
    if fraction is None:
        return Text("no limit", style="dim")
    shown = max(0.0, min(fraction, 1.0))
    filled = round(shown * width)
    style = "bold red" if fraction > 1 else "yellow" if fraction >= 0.9 else "green"
    text = Text(FULL * filled, style=style)
    text.append(EMPTY * (width - filled), style="dim")
    mark = " ✗" if fraction > 1 else " ⚠" if fraction >= 0.9 else "  "
    text.append(f"{number(fraction * 100, 0):>4} %{mark}")
    return text


FLAG_SYMBOLS = {
    "over limit": "✗",
    "overdue": "✗",
    "unaccounted material": "✗",
    "missing weighing": "⚠",
    "override used": "⚠",
    "near limit": "⚠",
    "due within 30 days": "⚠",
    "powder to return": "↩",
    "results missing": "?",
    "low yield": "⚠",
    "high blank": "⚠",
    "recovery not measured": "?",
    "failed acceptance": "✗",
    "reference material failed": "✗",
    "mass-dependence off": "⚠",
    "single run": "⚠",
    "no procedural blank measured": "⚠",
    "FAIL": "✗",  # a reference material outside its accepted value
    "pass": "✓",  # a reference material within it
}


def symbol_of(flag: str) -> str:
    """The symbol that says how serious a flag is (the words always follow it)."""
    return next((s for name, s in FLAG_SYMBOLS.items() if flag.startswith(name)), "•")


def flag_text(flags: Sequence[str]) -> Text:
    """Flags as symbol + words (``✗ over limit · ↩ powder to return``), or ``✓ ok``."""
    if not flags:
        return Text("✓ ok", style="green")
    text = Text()
    for index, flag in enumerate(flags):
        symbol = symbol_of(flag)
        style = "bold red" if symbol == "✗" else "yellow" if symbol in "⚠?" else ""
        if index:
            text.append(" ")  # unstyled: a styled span's leading space is not drawn on screen
            text.append("· ", style="dim")
        text.append(f"{symbol} {flag}", style=style)
    return text


def flag_lines(flags: Sequence[str]) -> str:
    """Flags one per line in words, or ``ok`` (plain: the CLI's wide tables)."""
    return "\n".join(flags) or "ok"


def _severity(flag: str) -> int:
    return "✗⚠↩?•✓".index(symbol_of(flag))


def flag_cell(flags: Sequence[str], width: int) -> Text:
    """Every flag for a narrow table cell, most serious first, one per line; a flag wider
    than the cell is wrapped at a space (indented under its words), never cut, so the row
    is as tall as ``cell_height`` says."""
    if not flags:
        return Text("✓ ok", style="green")
    text = Text()
    for index, flag in enumerate(sorted(flags, key=_severity)):
        symbol = symbol_of(flag)
        style = {"✗": "bold red", "⚠": "yellow", "?": "yellow", "✓": "green"}.get(symbol, "")
        if index:
            text.append("\n")
        text.append("\n  ".join(wrapped(f"{symbol} {flag}", width)), style=style)
    return text


def words_cell(words: Sequence[str], width: int) -> Text:
    """Words for a narrow table cell, one entry per line, wrapped at a space, never cut."""
    return Text("\n".join("\n  ".join(wrapped(entry, width)) for entry in words))


def cell_height(cell: Text | str) -> int:
    """How many lines a table cell needs."""
    plain = cell.plain if isinstance(cell, Text) else cell
    return plain.count("\n") + 1


def wrapped(entry: str, width: int) -> list[str]:
    """``entry`` in lines of at most ``width`` characters, continuation lines two narrower
    (they are indented); a word longer than a line is split."""
    lines: list[str] = []
    rest = entry
    room = max(width, 4)
    while len(rest) > room:
        cut = rest.rfind(" ", 0, room + 1)
        if cut <= 2:  # no space to break at past the mark: the word is split
            cut = room
        lines.append(rest[:cut].rstrip())
        rest = rest[cut:].lstrip()
        room = max(width - 2, 2)
    lines.append(rest)
    return lines
