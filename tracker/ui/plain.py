"""Stored text as the interface shows it: characters made visible, never read as markup.

Names, catalogue numbers and notes come from outside. Older databases can hold text
that today's input rule refuses (an ESC sequence, a bidi override, ``[red]`` or
``[link=...]`` that Textual's markup would obey). Every value from the database or a
file is put on screen through :func:`shown`: a ``Text`` (never parsed as markup) whose
hidden characters are written as ``<U+001B>`` by the domain's one display rule,
:func:`tracker.domain.text_rules.visible`. :class:`VisibleCharacters`, a line filter the
app adds to every line it draws, applies the same rule to whatever is drawn, so text
that reaches a widget some other way is never sent raw to the terminal either.
"""

from __future__ import annotations

from rich.segment import Segment
from rich.text import Text
from textual.color import Color
from textual.filter import LineFilter

from tracker.domain.text_rules import visible


def shown(value: object, style: str = "") -> Text:
    """Any value as plain text on screen: hidden characters visible, no markup, no emoji."""
    return Text(visible("" if value is None else str(value)), style=style)


class VisibleCharacters(LineFilter):
    """The last filter on every line drawn: a hidden character left in it is made visible.

    A line keeps its width (the compositor placed it), so a line that grows is cut at its
    end; lines of text put through :func:`shown` never grow here.
    """

    def apply(self, segments: list[Segment], background: Color) -> list[Segment]:
        if all(segment.text.isprintable() for segment in segments):
            return segments  # every usual line
        width = Segment.get_line_length(segments)
        made = [
            segment
            if segment.control
            else Segment(visible(segment.text, keep_lines=False), segment.style)
            for segment in segments
        ]
        return list(Segment.adjust_line_length(made, width))
