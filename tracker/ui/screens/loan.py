"""One loan: terms in force and their amendments, its specimens with consumption bars,
what can still be drilled (planning), its results on a chosen reference scale, its Sr age
screening, and the doors to the return report, the manifest import and the curve chooser."""

from __future__ import annotations

from typing import Any, ClassVar

from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.message import Message
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Static, TabbedContent, TabPane

from tracker.domain import precision
from tracker.domain.errors import TrackerError
from tracker.present.bars import flag_text, usage_bar
from tracker.present.items import override_text
from tracker.present.loans import plan_text
from tracker.services.loans import planning
from tracker.services.loans.planning import Plan
from tracker.services.read import lineage, reconcile
from tracker.services.read.lineage import ItemDetail
from tracker.services.read.reconcile import LoanLine, SpecimenLine
from tracker.ui.context import database, tracker_app
from tracker.ui.messages import Refused, refusal_text
from tracker.ui.plain import shown
from tracker.ui.screens.tabs import TabKeys, tab_keys
from tracker.ui.widgets import flagged_rows
from tracker.ui.widgets.flagged_rows import FlaggedRow
from tracker.ui.widgets.loan_results import ResultsPane
from tracker.ui.widgets.loan_screening import ScreeningPane
from tracker.ui.widgets.operator_bar import OperatorBar

SPECIMEN_COLUMNS = ("Specimen", "Catalogue no.", "Status", "Drilled / permitted")
# The bench forms that take the loan on screen, and those that take its highlighted specimen.
LOAN_FORMS = frozenset({"shipment", "loan_returned", "loan_close", "loan_amend", "loan_attach"})
SPECIMEN_FORMS = frozenset({"checkin", "drill", "return", "specimen_photo"})


class LoanScreen(TabKeys, Screen[None]):
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("enter", "open_specimen", "Open", id="loan.open"),
        Binding("c", "act('checkin')", "Check in", id="loan.checkin"),
        Binding("d", "act('drill')", "Drill", id="loan.drill"),
        Binding("p", "plan", "Plan", id="loan.plan"),
        Binding("R", "report", "Return report", id="loan.report"),
        Binding("I", "manifest", "Manifest", id="loan.manifest"),
        Binding("v", "show_view('scale')", "Scale", id="loan.scale"),
        Binding("r", "show_view('ratio')", "Ratio", id="loan.ratio"),
        Binding("u", "choose_curve", "Sr curve", id="loan.curve"),
        Binding("escape", "app.previous", "Back", id="loan.back"),
        *tab_keys(
            ("tab-specimens", "Specimens"),
            ("tab-terms", "Terms"),
            ("tab-plan", "Plan"),
            ("tab-results", "Results"),
            ("tab-screening", "Sr screening"),
        ),
    ]

    class Loaded(Message):
        def __init__(self, detail: ItemDetail, line: LoanLine) -> None:
            super().__init__()
            self.detail, self.line = detail, line

    class Planned(Message):
        def __init__(self, plan: Plan) -> None:
            super().__init__()
            self.plan = plan

    def __init__(self, loan: str) -> None:
        super().__init__()
        self.loan = loan
        self.flagged: list[FlaggedRow] = []  # the specimens' rows, refitted on a resize
        self.plan_typed: dict[str, str] = {}  # the plan form's fields as last typed
        self.plan_request: dict[str, Any] | None = None  # the plan last asked for

    def compose(self) -> ComposeResult:
        yield OperatorBar(f"Loan {self.loan}")
        yield Static("loading …", id="loan-head")
        with TabbedContent(id="loan-tabs"):
            with TabPane("Specimens", id="tab-specimens"):
                yield DataTable(id="specimens", cursor_type="row", zebra_stripes=True)
            with TabPane("Terms", id="tab-terms"):
                yield Static("", id="terms")
            with TabPane("Plan", id="tab-plan"):
                yield Static(
                    "Press p to choose the analyses and options, and see what each specimen "
                    "still needs.",
                    id="plan",
                )
            with TabPane("Results", id="tab-results"):
                yield ResultsPane(id="results-pane")
            with TabPane("Sr screening", id="tab-screening"):
                yield ScreeningPane(id="screening-pane")
        yield Static("", id="outcome")
        yield Footer(compact=True)

    def on_resize(self) -> None:
        """Fill the table; the flags take the width the terminal leaves them."""
        table = self.query_one("#specimens", DataTable)
        flagged_rows.fill(table, SPECIMEN_COLUMNS, self.flagged, self.size.width)

    def on_mount(self) -> None:
        self.reload()

    def on_screen_resume(self) -> None:
        self.reload()

    def reload(self) -> None:
        """The loan and its tabs, each read by its own worker."""
        self.load()
        self.query_one(ResultsPane).show(self.loan)
        self.query_one(ScreeningPane).show(self.loan)

    @work(thread=True, exclusive=True, group="load")
    def load(self) -> None:
        try:
            db = database(self)
            detail = lineage.show_item(db, self.loan)
            (line,) = reconcile.reconcile(db, detail.item.id)
        except TrackerError as error:
            self.post_message(Refused(error, "load"))
            return
        self.post_message(self.Loaded(detail, line))

    def on_loan_screen_loaded(self, event: Loaded) -> None:
        line, detail = event.line, event.detail
        self.loan = line.id
        head = Text()
        head.append(shown(f"{line.reference} · {line.lender} · {line.status}\n", style="bold"))
        head.append(shown(f"{detail.item.label.split(': ', 1)[-1]}\n"))
        head.append(shown(f"terms v{line.terms_version}: {', '.join(line.permitted_tissues)}; "))
        head.append(f"≤ {line.max_mass_per_specimen_mg or '—'} mg each, ")
        head.append(f"≤ {line.max_total_mass_mg or '—'} mg total, ")
        head.append(f"≤ {line.max_specimens_sampled or '—'} specimens; due {line.due_on}")
        head.append(f" ({line.days_left} d)\n" if line.status == "open" else "\n")
        head.append("used ")
        head.append_text(usage_bar(line.used_fraction, 10))
        head.append("  ")
        head.append_text(flag_text(line.flags))
        self.query_one("#loan-head", Static).update(head)
        self.flagged = [FlaggedRow(s.id, _specimen_cells(s), s.flags) for s in line.specimen_lines]
        self.on_resize()  # fills the table
        terms = Text()
        for t in detail.terms:
            terms.append(f"v{t.version} {t.kind} from {t.effective_from}: ", style="bold")
            terms.append(
                shown(
                    f"{', '.join(t.permitted_tissues)}; ≤ {t.max_mass_per_specimen_mg} mg each, "
                    f"≤ {t.max_total_mass_mg} mg total, ≤ {t.max_specimens_sampled} specimens, "
                    f"due {t.due_on}; powder: {t.powder_disposition}\n"
                )
            )
        for o in detail.overrides:
            terms.append_text(shown(override_text(o) + "\n", style="bold red"))
        for d in detail.documents:
            terms.append(
                shown(f"document {d.filename} ({d.role or 'attached'}) sha256 {d.sha256[:16]}…\n")
            )
        self.query_one("#terms", Static).update(terms)

    def on_refused(self, event: Refused) -> None:
        outcome = self.query_one("#outcome", Static)
        outcome.update(refusal_text(event.error))
        outcome.set_class(True, "-error")

    def selected_specimen(self) -> str | None:
        table = self.query_one("#specimens", DataTable)
        if not table.row_count:
            return None
        value = table.coordinate_to_cell_key(table.cursor_coordinate).row_key.value
        return str(value) if value else None

    @on(DataTable.RowSelected, "#specimens")
    def _row(self, event: DataTable.RowSelected) -> None:
        if event.row_key.value:
            tracker_app(self).open_id(str(event.row_key.value))

    def action_open_specimen(self) -> None:
        chosen = self.selected_specimen()
        if chosen:
            tracker_app(self).open_id(chosen)

    def prefill(self, form: str) -> dict[str, str]:
        """What a bench form opened here takes from this screen: the loan, or the
        highlighted specimen (see ``TrackerApp.action_bench``)."""
        if form in LOAN_FORMS:
            return {"loan": self.loan}
        chosen = self.selected_specimen()
        return {"specimen": chosen} if chosen and form in SPECIMEN_FORMS else {}

    def action_act(self, form: str) -> None:
        chosen = self.selected_specimen()
        tracker_app(self).action_bench(form, **({"specimen": chosen} if chosen else {}))

    def action_show_view(self, view: str) -> None:
        """A view of the loan by name, as the palette asks for it: its plan (the options form
        first), its results, the scale or ratio chooser over them, or its Sr screening."""
        if view == "plan":
            self.action_plan()
            return
        tab = {
            "results": "tab-results",
            "scale": "tab-results",
            "ratio": "tab-results",
            "screening": "tab-screening",
        }
        self.query_one("#loan-tabs", TabbedContent).active = tab[view]
        if view == "scale":
            self.query_one(ResultsPane).choose_scale()
        if view == "ratio":
            self.query_one(ResultsPane).choose_ratio()

    def action_choose_curve(self) -> None:
        """The curve chooser for this loan, its present curve chosen (if it has one)."""
        current = self.query_one(ScreeningPane).curve
        chosen = {"curve": current} if current else {}
        tracker_app(self).action_bench("loan_curve", loan=self.loan, **chosen)

    def action_report(self) -> None:
        tracker_app(self).action_return_report(self.loan)

    def action_manifest(self) -> None:
        tracker_app(self).action_manifest_import(self.loan)

    def action_plan(self) -> None:
        """Every option of the plan on a small form; the plan shows here when it returns."""
        from tracker.ui.screens.plan_form import PlanFormScreen

        form = PlanFormScreen(self.loan, self.plan_typed)

        def chosen(request: dict[str, Any] | None) -> None:
            if request is None:
                return
            self.plan_typed, self.plan_request = form.typed, request
            self.query_one("#loan-tabs", TabbedContent).active = "tab-plan"
            self.query_one("#plan", Static).update("… planning")
            self.plan(request)

        self.app.push_screen(form, chosen)

    @work(thread=True, exclusive=True, group="plan")
    def plan(self, request: dict[str, object]) -> None:
        try:
            answer = planning.plan(database(self), request)
        except TrackerError as error:
            self.post_message(Refused(error, "plan"))
            return
        self.post_message(self.Planned(answer))

    def on_loan_screen_planned(self, event: Planned) -> None:
        self.query_one("#plan", Static).update(plan_text(event.plan))


def _specimen_cells(s: SpecimenLine) -> tuple[str | Text, ...]:
    """A specimen's ID, catalogue number, status, and what it used of its allowance."""
    used = s.drilled_mg / s.permitted_mg if s.permitted_mg else None
    bar = Text.assemble(
        precision.used_of_limit(s.drilled_mg, s.permitted_mg), " ", usage_bar(used, 6)
    )
    return (s.id, shown(s.catalog_number), s.status.replace("_", " "), bar)
