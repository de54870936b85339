"""A form field's label, with its hint or example beside it in dim text.

Examples never sit inside the field as placeholder text: an empty field must look empty, or a
person reads "2 M HNO3" in a dissolve form, saves, and is told the acid is required.
"""

from __future__ import annotations

from rich.text import Text
from textual.widgets import Static


def label_text(label: str, hint: str = "", note: str = "") -> Text:
    """``label`` in the form's label style, then ``note`` (e.g. who may fill it) and ``hint``
    (an example or how to fill it) dimmed, so they are read as help and never as a value."""
    text = Text(label)
    if note:
        text.append(f"  {note}")
    if hint:
        text.append("  ")  # outside the dim span: a span's leading spaces are not drawn
        text.append(f"· {hint}", style="dim")
    return text


class FieldLabel(Static):
    """The label line above a field."""

    def __init__(self, label: str, hint: str = "", note: str = "") -> None:
        super().__init__(label_text(label, hint, note), classes="field-label")
