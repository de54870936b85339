"""Messages shared by several screens: refusals, scans, navigation. Each screen defines the
messages that carry its own data (``OverviewScreen.Loaded`` ...)."""

from __future__ import annotations

from typing import TYPE_CHECKING

from rich.text import Text
from textual.message import Message

from tracker.domain.errors import Busy, TrackerError
from tracker.domain.text_rules import visible
from tracker.ui.plain import shown

if TYPE_CHECKING:  # the label services are heavy; only the scan worker needs them loaded
    from tracker.services.labels.handling import ScanView


class Refused(Message):
    """A service refused (InputError or RuleViolation): shown as one line where it happened."""

    def __init__(self, error: TrackerError, purpose: str = "") -> None:
        super().__init__()
        self.error, self.purpose = error, purpose


class ScanResolved(Message):
    """A scan (or a typed ID) named something in the database."""

    def __init__(self, view: ScanView, batch: str | None = None) -> None:
        super().__init__()
        self.view, self.batch = view, batch


class ScanFailed(Message):
    """A scan could not be read (a wrong check character, an unknown ID ...)."""

    def __init__(self, text: str, error: TrackerError) -> None:
        super().__init__()
        self.text, self.error = text, error


# Where the interface chooses the operator, said after a refusal about the operator.
OPERATOR_HINT = "Ctrl+O chooses the operator"


def refusal_text(error: TrackerError) -> Text:
    """How every refusal reads on screen: a cross, then the service's own one line (which
    quotes values from outside: shown with hidden characters visible, never as markup),
    and for a refusal about the operator, where the interface chooses another.

    A busy database is no refusal of the request: its line (who holds the database,
    since when, try again) stands alone, word for word as the command line prints it.
    """
    line = visible(error.one_line(), keep_lines=False)
    if isinstance(error, Busy):
        return shown(f"✗ {line}")
    hint = f" ({OPERATOR_HINT})" if error.field == "operator" else ""
    return shown(f"✗ refused: {line}{hint}")
