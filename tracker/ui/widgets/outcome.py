"""The one-line outcome under a form or a file screen: what the last action did, or why not."""

from __future__ import annotations

from rich.text import Text
from textual.widgets import Static

from tracker.ui.plain import shown


def show_outcome(line: Static, text: str | Text, *, error: bool) -> None:
    """Say it in words and mark it: "-error" for a refusal, "-ok" for a "✓" success (the
    marks add colour; the words and the symbol carry the meaning without it). The words
    can quote stored text: they are shown, never read as markup."""
    said = text if isinstance(text, Text) else shown(text)
    line.update(said)
    line.set_class(error, "-error")
    line.set_class(not error and said.plain.startswith("✓"), "-ok")
