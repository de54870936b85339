"""Who is at the bench: chosen at start, remembered on this machine, shown on every screen."""

from __future__ import annotations

from typing import ClassVar

from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Footer, OptionList, Static
from textual.widgets.option_list import Option

from tracker.services.core.views import OperatorView
from tracker.ui.plain import shown


class OperatorScreen(ModalScreen[str]):
    """Pick an operator; dismisses with the operator's code."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "cancel", "Keep current", id="operator.cancel"),
    ]

    def __init__(self, operators: list[OperatorView], current: str | None) -> None:
        super().__init__()
        self.operators = [o for o in operators if o.active]
        self.current = current

    def compose(self) -> ComposeResult:
        with Vertical(id="operator-box"):
            yield Static("Who is recording?", classes="box-title")
            yield Static(
                "Every event in the ledger names its operator. Managers may override loan "
                "limits; technicians may not.",
                classes="intro",
            )
            yield OptionList(
                *[
                    Option(
                        shown(
                            f"{o.code:<10} {o.name} · {o.role}"
                            + ("  (manager: may override limits)" if o.role == "manager" else "")
                        ),
                        id=o.code,
                    )
                    for o in self.operators
                ],
                id="operators",
            )
        yield Footer(compact=True)

    def on_mount(self) -> None:
        options = self.query_one("#operators", OptionList)
        codes = [o.code for o in self.operators]
        options.highlighted = codes.index(self.current) if self.current in codes else 0
        options.focus()

    @on(OptionList.OptionSelected, "#operators")
    def _chosen(self, event: OptionList.OptionSelected) -> None:
        if event.option.id:
            self.dismiss(event.option.id)

    def action_cancel(self) -> None:
        if self.current:
            self.dismiss(self.current)
