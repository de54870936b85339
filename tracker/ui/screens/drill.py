"""Drilling: tare and gross as typed, the loan's remaining allowance recomputed live.

The preview is the drill service's own check run read-only (``drilling.preview_drill``);
Ctrl+S calls ``drilling.drill`` and shows its refusal when the drill is over a limit.
A manager may fill the override reason; for anyone else that field is locked.
"""

from __future__ import annotations

from typing import Any, ClassVar

from rich.text import Text
from textual import on, work
from textual.message import Message
from textual.timer import Timer
from textual.widgets import Input, Static

from tracker.db.database import Database
from tracker.domain import precision
from tracker.domain.errors import TrackerError
from tracker.present.bars import usage_bar
from tracker.services.bench import drilling
from tracker.services.bench.drilling import DrillPreview, LimitLine
from tracker.services.core.views import Done
from tracker.ui.context import database
from tracker.ui.messages import Refused
from tracker.ui.plain import shown
from tracker.ui.screens.form import Field, FormScreen
from tracker.ui.widgets.id_field import IdField

PREVIEW_DELAY = 0.15
PREVIEWED_FIELDS = ("specimen", "tissue", "tare", "gross", "readability")


class DrillScreen(FormScreen):
    TITLE = "Drill a specimen"
    INTRO = (
        "Tare the empty vial, drill, weigh it again (gross). Caution: drilling makes fine "
        "dust — use extraction and protection as your institution's rules require."
    )
    FIELDS: ClassVar[list[Field]] = [
        Field("specimen", "Specimen", kind="id", hint="scan the specimen, SP-"),
        Field("tissue", "Tissue", hint="as the loan permits, e.g. enameloid"),
        Field("site", "Site on the specimen (optional)", hint="e.g. labial face, mid-crown"),
        Field("tare", "Vial tare", hint="e.g. 1203.557 mg"),
        Field("gross", "Vial gross (with powder)", hint="e.g. 1206.118 mg"),
        Field("readability", "Balance readability", value="0.001 mg"),
        Field("location", "Put the powder in (optional)", kind="location"),
        Field("override-reason", "Override reason (over a limit)", manager_only=True),
    ]

    class Previewed(Message):
        def __init__(self, preview: DrillPreview, seq: int) -> None:
            super().__init__()
            self.preview, self.seq = preview, seq

    def __init__(self, **values: str) -> None:
        super().__init__(**values)
        self._timer: Timer | None = None
        self._seq = 0  # answers to older drafts arrive late sometimes: only the newest counts
        self.preview_view: DrillPreview | None = None
        self.refused = False  # a save's refusal is on screen under the form

    @staticmethod
    def service(db: Database, actor: str | None, values: dict[str, Any]) -> Done[Any]:
        return drilling.drill(db, actor, values)

    def on_mount(self) -> None:
        super().on_mount()
        self.schedule_preview()

    def confirm_first(self, values: dict[str, Any]) -> tuple[str, str] | None:
        reason = values.get("override_reason")
        if not reason:
            return None
        return (
            "Drill past the loan's limits?",
            f"The override and its reason ({reason}) are recorded in the ledger under your "
            "name and shown to the lender in the return report.",
        )

    @on(Input.Changed)
    def _typed(self, event: Input.Changed) -> None:
        if self.refused and self.preview_view is not None:  # the refusal is cleared: say it here
            self.show_preview(render_preview(self.preview_view))
        self.refused = False
        if event.input.id and event.input.id.removeprefix("f-") in PREVIEWED_FIELDS:
            self.schedule_preview()

    def on_id_field_resolved(self, event: IdField.Resolved) -> None:
        if event.field.field_name == "specimen":
            self.schedule_preview()

    def schedule_preview(self) -> None:
        if self._timer is not None:
            self._timer.stop()
        self._timer = self.set_timer(PREVIEW_DELAY, self._preview_now)

    def _preview_now(self) -> None:
        draft = {k: v for k, v in self.values().items() if k in PREVIEWED_FIELDS}
        if "specimen" not in draft:
            self.show_preview(Text("Scan a specimen to see its allowance."))
            return
        self._seq += 1
        self.preview(draft, self._seq)

    @work(thread=True, exclusive=True, group="preview")
    def preview(self, draft: dict[str, Any], seq: int) -> None:
        try:
            view = drilling.preview_drill(database(self), draft)
        except TrackerError as error:
            self.post_message(Refused(error, f"preview {seq}"))
            return
        self.post_message(self.Previewed(view, seq))

    def on_refused(self, event: Refused) -> None:
        """A preview's refusal belongs to the preview, never to the form's outcome line
        (the form's own handler, called after this one, says a save's refusal)."""
        if not event.purpose.startswith("preview"):
            self.refused = True  # the outcome line says the limits whole: the preview need not
            if self.preview_view is not None:
                self.show_preview(render_preview(self.preview_view, violations=False))
                over = self.preview_view.violations
                reason = self.query_one("#f-override-reason", Input)
                if over and not reason.disabled:  # a manager may go on: the reason is next
                    reason.focus()
            return
        event.prevent_default()
        event.stop()
        if event.purpose != f"preview {self._seq}":
            return
        self.preview_view = None
        self.show_preview(shown(f"✗ {event.error.one_line()}"))

    def on_drill_screen_previewed(self, event: DrillScreen.Previewed) -> None:
        event.stop()
        if event.seq != self._seq:
            return
        self.preview_view = event.preview
        tissue = self.query_one("#f-tissue", Input)
        if not tissue.value and len(event.preview.permitted_tissues) == 1:
            self.auto_fill(tissue, event.preview.tissue)  # the loan permits only this one
        self.show_preview(render_preview(event.preview, violations=not self.refused))

    def show_preview(self, content: Text) -> None:
        preview = self.query_one("#preview", Static)
        preview.update(content)
        preview.set_class(True, "-shown")


def render_preview(view: DrillPreview, violations: bool = True) -> Text:
    """The allowance as the drill would leave it; ``violations`` off while a refusal under
    the form already says each exceeded limit in full (the form keeps its room at 80×24)."""
    text = Text()
    text.append(f"Allowance · {view.loan} terms v{view.terms_version} · ", style="bold")
    text.append(shown(f"{view.catalog_number} ({view.status.replace('_', ' ')})\n"))
    text.append(f"  permitted: {', '.join(view.permitted_tissues)} · due {view.due_on}\n")
    for line in (view.per_specimen, view.loan_total):
        text.append_text(_limit(line, view.mass_mg))
    counts = []  # one line for the drill and the specimen count: the form keeps its room
    if view.mass_mg is not None:
        counts.append(f"this drill {precision.mass_mg(view.mass_mg, view.mass_u_mg)}")
    if view.max_specimens_sampled is not None:
        more = "" if view.already_sampled else " +1 with this one"
        counts.append(
            f"specimens sampled {view.sampled_specimens} (max {view.max_specimens_sampled}){more}"
        )
    if counts:
        text.append(f"  {' · '.join(counts)}\n")
    if view.problem:
        text.append(shown(f"✗ {view.problem}\n", style="bold red"))
    for violation in view.violations if violations else ():
        text.append(f"✗ over: {violation}\n", style="bold red")
    if view.violations and not violations:
        text.append(f"✗ over {len(view.violations)} limit(s): see below\n", style="bold red")
    elif view.violations:
        text.append("Ctrl+S will be refused unless a manager gives an override reason.\n")
    elif view.within:
        text.append("✓ within the loan's terms\n", style="green")
    else:
        text.append("… type tare and gross to check the drill\n", style="dim")
    text.rstrip()
    return text


def _limit(line: LimitLine, mass: float | None) -> Text:
    text = Text(f"  {line.name:<13}")
    if line.limit_mg is None or line.left_before_mg is None:
        text.append("no limit\n")
        return text
    after = line.used_mg + (mass or 0.0)
    text.append_text(usage_bar(after / line.limit_mg, 8))
    text.append(
        f"  {precision.limit_mg(line.limit_mg)}, left {precision.mass_mg(line.left_before_mg)}"
    )
    if line.left_after_mg is not None:
        text.append(f" → after {precision.mass_mg(line.left_after_mg)}")
    text.append("\n")
    return text
