"""Stored text on screen: ``shown`` (content) and the app's last line filter (everything drawn).

What counts as a hidden character is read from ``unicodedata`` (general categories).
"""

from __future__ import annotations

import html
import unicodedata

from rich.cells import cell_len
from rich.segment import Segment
from rich.text import Text
from textual.color import Color
from textual.widgets import Static

from tests.ui.conftest import Lab, settle
from tracker.ui.plain import VisibleCharacters, shown

HIDDEN = {"Cc", "Cf", "Cs", "Co", "Cn", "Zl", "Zp"}


def test_shown_is_plain_text_with_hidden_characters_visible() -> None:
    text = shown("[bold]FH\x1b[2J\u202e[/bold]:warning:", style="dim")
    assert isinstance(text, Text) and not text.spans  # no markup read into spans
    assert text.plain == "[bold]FH<U+001B>[2J<U+202E>[/bold]:warning:"
    assert all(unicodedata.category(c) not in HIDDEN for c in text.plain)


def test_the_filter_keeps_a_line_its_width_and_shows_what_is_hidden() -> None:
    line = [Segment("ab\x1b[31mcd"), Segment("\u200b" + " " * 20), Segment("|")]
    width = sum(cell_len(s.text) for s in line)
    filtered = VisibleCharacters().apply(line, Color(0, 0, 0))
    drawn = "".join(s.text for s in filtered)
    assert sum(cell_len(s.text) for s in filtered) == width
    assert drawn.startswith("ab<U+001B>[31mcd<U+200B>")
    assert all(unicodedata.category(c) not in HIDDEN for c in drawn)
    plain = [Segment("δ 2.1 ‰ │ ok")]
    assert VisibleCharacters().apply(plain, Color(0, 0, 0)) is plain


async def test_text_that_reaches_a_widget_raw_is_still_drawn_visibly(lab: Lab) -> None:
    async with lab.app().run_test(size=(100, 30)) as pilot:
        await settle(pilot)
        await pilot.app.screen.mount(Static(Text("raw \x1b]0;title\x07\x1b[2J \u202eend")))
        await settle(pilot)
        drawn = html.unescape(pilot.app.export_screenshot())
    for char in ("\x1b", "\x07", "\u202e"):
        assert char not in drawn
    assert "raw <U+001B>]0;title" in drawn.replace("\u00a0", " ")
