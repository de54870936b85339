"""What every correction form shares: after saving it stays, and says what was corrected
and which sessions' results were reduced again (the words the command line prints)."""

from __future__ import annotations

from typing import Any

from tracker.present.text import corrected
from tracker.services.core.views import Done
from tracker.ui.screens.form import FormScreen


class CorrectionForm(FormScreen):
    """A bench form whose service answers with a correction."""

    def after_save(self, done: Done[Any]) -> None:
        self.show_outcome(f"✓ {corrected(done.item)} · ledger event #{done.event_seq}", error=False)
