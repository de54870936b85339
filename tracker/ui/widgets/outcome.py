"""The one-line outcome under a form or a file screen: what the last action did, or why not."""

from __future__ import annotations

from textual.widgets import Static


def show_outcome(line: Static, text: str, *, error: bool) -> None:
    """Say it in words and mark it: "-error" for a refusal, "-ok" for a "✓" success (the
    marks add colour; the words and the symbol carry the meaning without it)."""
    line.update(text)
    line.set_class(error, "-error")
    line.set_class(not error and text.startswith("✓"), "-ok")
