"""Number keys for a screen's tabs: 1 for the first tab, 2 for the second …, so every tab is
reachable without a mouse (a field that has the focus keeps its digits)."""

from __future__ import annotations

from textual.binding import Binding
from textual.widgets import TabbedContent


def tab_keys(*panes: tuple[str, str]) -> list[Binding]:
    """Bindings 1, 2, … for the tabs ``(pane id, title)``, in their order on screen."""
    return [
        Binding(str(number), f"show_tab('{pane}')", title, id=f"tab.{pane}")
        for number, (pane, title) in enumerate(panes, 1)
    ]


class TabKeys:
    """The action the number keys call; mixed into a screen with one TabbedContent."""

    def action_show_tab(self, pane: str) -> None:
        self.query_one(TabbedContent).active = pane  # type: ignore[attr-defined]
