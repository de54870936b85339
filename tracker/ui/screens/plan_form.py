"""The plan's options, every one the command line's ``plan`` takes, on one 80×24 screen.

Each option is one line: its label with the value it takes when left empty beside it (dimmed,
never inside the field), and a one-line field. Ctrl+S checks what was typed against the plan's
own request model and hands the request back to the loan screen, which asks the planning
service in a worker; nothing is written.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, ClassVar

from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical
from textual.screen import Screen
from textual.widgets import Footer, Input, Static

from tracker.domain import precision
from tracker.domain.errors import TrackerError
from tracker.services.core.inputs import parse
from tracker.services.loans.planning import PlanRequest, default_of, one_analysis
from tracker.ui.messages import refusal_text
from tracker.ui.widgets.field_label import label_text
from tracker.ui.widgets.operator_bar import OperatorBar
from tracker.ui.widgets.outcome import show_outcome


@dataclass(frozen=True)
class Option:
    """One option of the plan: the service's field, its label, its default in words."""

    name: str
    label: str
    default: Callable[[Any], str] | str = str  # the default in words, or how to word it


def _share(value: Any) -> str:
    return precision.as_given(float(value))


OPTIONS: tuple[Option, ...] = (
    Option("ug_per_analysis", "Element per analysis (µg)", "needed, e.g. 2"),
    Option("replicates", "Replicates per specimen"),
    Option("element", "Element"),
    Option("expected_yield", "Expected column yield (0–1)", _share),
    Option("material", "Material", "from the tissue"),
    Option("tissue", "Tissue", "the loan's first permitted tissue"),
    Option("margin_percent", "Safety margin (%)", _share),
    Option("aliquot_share", "Share kept for concentration (0–1)", _share),
    Option("min_powder_mg", "Smallest powder worth drilling (mg)", _share),
)


def hint_of(option: Option) -> str:
    """What an empty field stands for, read from the plan's request model (one source)."""
    if isinstance(option.default, str):
        return option.default
    return f"default {option.default(default_of(option.name))}"


class PlanFormScreen(Screen[dict[str, Any] | None]):
    """Ask for a plan's options; dismissed with the plan request, or None on Escape."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("ctrl+s", "plan", "Plan", id="plan.run", priority=True),
        Binding("escape", "cancel", "Back", id="plan.back"),
    ]

    def __init__(self, loan: str, typed: dict[str, str] | None = None) -> None:
        super().__init__()
        self.loan = loan
        self.typed = typed or {}  # what was typed last time, kept for the next plan

    def compose(self) -> ComposeResult:
        yield OperatorBar(f"Plan drilling for {self.loan}")
        with Vertical(id="plan-form"):
            yield Static(
                "Leave a field empty for the value beside it. Ctrl+S shows the plan.",
                classes="intro",
            )
            for option in OPTIONS:
                with Horizontal(classes="plan-option"):
                    yield Static(label_text(option.label, hint_of(option)), classes="plan-label")
                    yield Input(
                        self.typed.get(option.name, ""), id=f"f-{option.name}", compact=True
                    )
        yield Static("", id="outcome")
        yield Footer(compact=True)

    def on_mount(self) -> None:
        self.query_one(f"#f-{OPTIONS[0].name}", Input).focus()

    def typed_values(self) -> dict[str, str]:
        """What was typed, by field; empty fields are left out (their defaults apply)."""
        values = {o.name: self.query_one(f"#f-{o.name}", Input).value.strip() for o in OPTIONS}
        return {name: text for name, text in values.items() if text}

    def action_plan(self) -> None:
        typed = self.typed_values()
        request = one_analysis(self.loan, typed)
        try:
            parse(PlanRequest, request)  # the request's own checks, before anything is asked
        except TrackerError as error:
            show_outcome(self.query_one("#outcome", Static), refusal_text(error), error=True)
            field = error.field.split(".")[-1].replace("-", "_")
            found = self.query(f"#f-{field}")
            if found:
                found.first().focus()
            return
        self.typed = typed
        self.dismiss(request)

    def action_cancel(self) -> None:
        self.dismiss(None)

    def on_input_changed(self, event: Input.Changed) -> None:
        """A refusal speaks of what was typed then: it goes once a field changes."""
        outcome = self.query_one("#outcome", Static)
        if outcome.has_class("-error"):
            show_outcome(outcome, "", error=False)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        """Enter moves on to the next option, as Tab does."""
        self.focus_next()
