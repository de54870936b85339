"""The terminal interface: one app, a screen per task, every write through tracker.services.

Database work happens only in thread workers, which post typed messages back; the UI thread
only draws. Keys pass :mod:`tracker.ui.keys` before any widget sees them: a barcode scan
fills the focused ID field or jumps to the scanned item, and text typed outside a field is
found on Enter instead of firing shortcuts.

Start-up: a worker opens the database; with an operator named (``--as``) the loans
overview is drawn at once and says it is reading the open loans until the services have
given them (the same :func:`tracker.services.read.reconcile.reconcile` the CLI's overview calls).

Signing: when an operator is chosen the app asks, once, for the passphrase of their key
(:class:`~tracker.ui.screens.passphrase.PassphraseScreen`); the unlocked key stays in this
process's memory only, and after ``lock_after`` seconds without a key press or a click it
is forgotten and the passphrase asked for again.
"""

from __future__ import annotations

import time
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any, ClassVar

from textual import work
from textual.app import SystemCommand
from textual.binding import Binding, BindingType
from textual.filter import LineFilter
from textual.message import Message
from textual.reactive import reactive
from textual.screen import Screen

from tracker.domain.errors import InputError, TrackerError
from tracker.domain.ids import BadId, Kind, parse_id
from tracker.domain.text_rules import visible
from tracker.domain.timeutil import Clock, utcnow
from tracker.ui import settings
from tracker.ui.keys import KeyRouting
from tracker.ui.messages import ScanFailed, ScanResolved
from tracker.ui.plain import VisibleCharacters, shown

if TYPE_CHECKING:  # loaded by the workers that open the database, after the first screen
    from tracker.db.database import Database
    from tracker.db.keyfiles import KeyFile
    from tracker.services.core.views import OperatorView


class DatabaseOpened(Message):
    def __init__(self, db: Database, operators: list[OperatorView]) -> None:
        super().__init__()
        self.db, self.operators = db, operators


class KeyNeeded(Message):
    """The operator's key is locked: ask for its passphrase (``why``: after the idle lock)."""

    def __init__(self, key_file: KeyFile, why: str) -> None:
        super().__init__()
        self.key_file, self.why = key_file, why


class KeyProblem(Message):
    """The operator cannot sign here (no key registered, revoked, no key file ...)."""

    def __init__(self, error: TrackerError) -> None:
        super().__init__()
        self.error = error


class DatabaseFailed(Message):
    def __init__(self, error: TrackerError) -> None:
        super().__init__()
        self.error = error


class TrackerApp(KeyRouting):
    """``tracker`` with no command, on a terminal."""

    CSS_PATH = "tracker.tcss"
    TITLE = "tracker"
    ENABLE_COMMAND_PALETTE = True
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("f1", "help", "Help", id="app.help"),
        Binding("f2", "loans", "Loans", id="app.loans"),
        Binding("f3", "batches", "Batches", id="app.batches"),
        Binding("f4", "sessions", "Sessions", id="app.sessions"),
        Binding("f5", "labels", "Labels", id="app.labels"),
        Binding("f6", "ledger", "Ledger", id="app.ledger"),
        Binding("ctrl+o", "choose_operator", "Operator", id="app.operator"),
        Binding("c", "bench('checkin')", "Check in", id="bench.checkin", show=False),
        Binding("d", "bench('drill')", "Drill", id="bench.drill", show=False),
        Binding("s", "bench('dissolve')", "Dissolve", id="bench.dissolve", show=False),
        Binding(
            "k", "bench('concentration')", "Concentration", id="bench.concentration", show=False
        ),
        Binding("a", "bench('aliquot')", "Aliquot", id="bench.aliquot", show=False),
        Binding("m", "bench('move')", "Move", id="bench.move", show=False),
        Binding("escape", "previous", "Back", id="app.previous", show=False),
    ]

    operator_label: reactive[str] = reactive("no operator yet")

    def __init__(
        self,
        target: str,
        operator: str | None = None,
        *,
        clock: Clock = utcnow,
        out_dir: Path | None = None,
        lock_after: float | None = None,
    ) -> None:
        super().__init__()
        self.target, self.preselected, self.clock = target, operator, clock
        # seconds without input before the signing key is locked again (TRACKER_LOCK_AFTER)
        self.lock_after = lock_after if lock_after is not None else settings.lock_after()
        self.signing = False  # the operator's key is unlocked (as far as this app knows)
        self.out_dir = out_dir or Path.cwd()  # where printed label PDFs are written
        self.db: Database | None = None
        self.operator: str | None = None
        self.operators: list[OperatorView] = []
        self._visible = VisibleCharacters()

    def get_line_filters(self) -> Sequence[LineFilter]:
        """Textual's own filters, then ours: no hidden character is drawn raw (see plain.py)."""
        return [*super().get_line_filters(), self._visible]

    def tell(self, message: str, *, title: str = "", **options: Any) -> None:
        """A notification whose words may quote stored text: shown as written, never markup."""
        self.notify(visible(message), title=visible(title), markup=False, **options)

    # ------------------------------------------------------------------ start-up
    def on_mount(self) -> None:
        self.set_interval(min(self.lock_after / 3, 5.0), self._lock_when_idle)
        self.status_line = "opening the database …"
        if self.preselected:  # the first screen at once; it fills when the services have read it
            from tracker.ui.screens.overview import OverviewScreen

            self.push_screen(OverviewScreen())
        self.open_database()

    @work(thread=True, exclusive=True, group="open")
    def open_database(self) -> None:
        from tracker.db.database import open_database
        from tracker.services.admin import setup

        try:
            db = open_database(self.target, clock=self.clock)
            operators = setup.list_operators(db)
        except TrackerError as error:
            self.post_message(DatabaseFailed(error))
            return
        self.post_message(DatabaseOpened(db, operators))

    def on_database_opened(self, event: DatabaseOpened) -> None:
        self.db, self.operators = event.db, event.operators
        self.status_line = ""
        codes = {o.code for o in self.operators if o.active}
        if self.preselected in codes:
            self.set_operator(self.preselected)
            return
        if self.preselected:
            self.tell(f"✗ --as {self.preselected}: no such active operator", severity="error")
        self.action_choose_operator()

    def on_database_failed(self, event: DatabaseFailed) -> None:
        self.exit(
            message=shown(f"error: {event.error.one_line()}"), return_code=event.error.exit_code
        )

    def on_unmount(self) -> None:
        if self.db is not None:
            self.db.close()

    # ------------------------------------------------------------------ the operator
    @property
    def role(self) -> str | None:
        found = next((o for o in self.operators if o.code == self.operator), None)
        return found.role if found else None

    @property
    def is_manager(self) -> bool:
        return self.role == "manager"

    def set_operator(self, code: str) -> None:
        first = self.operator is None
        self.operator = code
        settings.remember_operator(self.target, code)
        role = self.role or "?"
        mark = "★ manager" if role == "manager" else f"{role} (no overrides)"
        self.operator_label = f"operator: {code} · {mark}"
        self.signing = False
        self.find_key(code)
        if not first:
            return
        from tracker.ui.screens.overview import OverviewScreen

        shown = [s for s in self.screen_stack if isinstance(s, OverviewScreen)]
        if shown:  # drawn before the database was open: read it now
            shown[0].action_refresh()
        else:
            self.push_screen(OverviewScreen())

    # ------------------------------------------------------------------ the signing key
    @work(thread=True, exclusive=True, group="key")
    def find_key(self, code: str, why: str = "") -> None:
        """Which key file to unlock for ``code`` (none: unlocked already), or why none can."""
        from tracker.services.admin import keys

        if self.db is None:
            return
        try:
            key_file = keys.key_to_unlock(self.db, code)
        except TrackerError as error:
            self.post_message(KeyProblem(error))
            return
        if key_file is None:
            self.call_from_thread(setattr, self, "signing", True)
        else:
            self.post_message(KeyNeeded(key_file, why))

    def on_key_needed(self, event: KeyNeeded) -> None:
        from tracker.ui.screens.passphrase import PassphraseScreen

        assert self.db is not None

        def unlocked(done: bool | None) -> None:
            self.signing = bool(done)
            self._last_input = time.monotonic()
            if done:
                self.status_line = f"✓ {event.key_file.operator}'s key is unlocked"

        self.push_screen(PassphraseScreen(self.db, event.key_file, event.why), unlocked)

    def on_key_problem(self, event: KeyProblem) -> None:
        self.status_line = f"✗ {event.error.one_line()}"
        self.tell(event.error.one_line(), title="✗ no signing key", severity="error", timeout=10)

    def _lock_when_idle(self) -> None:
        idle = time.monotonic() - self._last_input
        if self.signing and self.operator is not None and idle >= self.lock_after:
            self.signing = False
            self.lock_key(self.operator)

    @work(thread=True, exclusive=True, group="key")
    def lock_key(self, code: str) -> None:
        """Forget the operator's unlocked keys, then ask for the passphrase again."""
        from tracker.services.admin import keys

        if self.db is None:
            return
        keys.lock(self.db, code)
        minutes = self.lock_after / 60
        said = f"{minutes:g} minute(s)" if minutes >= 1 else f"{self.lock_after:g} s"
        self.call_from_thread(self.find_key, code, f"Locked after {said} without input.")

    def action_choose_operator(self) -> None:
        from tracker.ui.screens.operator_pick import OperatorScreen

        current = self.operator or settings.remembered_operator(self.target)

        def chosen(code: str | None) -> None:
            if code:
                self.set_operator(code)

        self.push_screen(OperatorScreen(self.operators, current), chosen)

    # ------------------------------------------------------------------ navigation
    def open_id(self, public_id: str, *, replace: bool = False) -> None:
        """Show what an ID names: a loan, a batch, a session or any item's lineage."""
        screen = self._screen_for(public_id)
        if screen is None:
            self.scan_lookup(public_id)  # a position: its batch is found in a worker
            return
        if replace and len(self.screen_stack) > 2:
            self.switch_screen(screen)
        else:
            self.push_screen(screen)

    def _screen_for(self, public_id: str) -> Screen[None] | None:
        from tracker.ui.screens.batch import BatchScreen
        from tracker.ui.screens.item import ItemScreen
        from tracker.ui.screens.loan import LoanScreen
        from tracker.ui.screens.session import SessionScreen

        try:
            kind = parse_id(public_id).kind
        except BadId:
            return LoanScreen(public_id)  # a lender's loan reference
        if kind is Kind.LOAN:
            return LoanScreen(public_id)
        if kind is Kind.COLUMN_BATCH:
            return BatchScreen(public_id)
        if kind is Kind.INSTRUMENT_SESSION:
            return SessionScreen(public_id)
        if kind is Kind.POSITION:
            return None
        return ItemScreen(public_id)

    def action_previous(self) -> None:
        if len(self.screen_stack) > 2:
            self.pop_screen()

    def _go(self, screen: Screen[None]) -> None:
        while len(self.screen_stack) > 2:
            self.pop_screen()
        self.push_screen(screen)

    def action_loans(self) -> None:
        while len(self.screen_stack) > 2:
            self.pop_screen()

    def action_batches(self) -> None:
        from tracker.ui.screens.batch import BatchScreen

        self._go(BatchScreen(None))

    def action_sessions(self) -> None:
        from tracker.ui.screens.session import SessionScreen

        self._go(SessionScreen(None))

    def action_labels(self) -> None:
        from tracker.ui.screens.labels import LabelsScreen

        self._go(LabelsScreen())

    def action_ledger(self, then: str = "") -> None:
        """The ledger screen; ``then`` one of its actions (export, anchor, verify, audit)."""
        from tracker.ui.screens.ledger import LedgerScreen

        screen = LedgerScreen()
        self._go(screen)
        if then:
            self.call_after_refresh(screen.run_action, then)

    def action_help(self) -> None:
        from tracker.ui.screens.help import HelpScreen

        if not isinstance(self.screen, HelpScreen):
            self.push_screen(HelpScreen())

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        """A bench form never opens on top of another form: finish it or leave it first."""
        from tracker.ui.screens.form import FormScreen

        return not (action == "bench" and isinstance(self.screen, FormScreen))

    def action_bench(self, form: str, **values: str) -> None:
        """Open a bench form; with no values given (the palette, a key anywhere), the
        screen on top fills in what it shows (the item or the loan) where the form takes it."""
        known = getattr(self.screen, "prefill", None)
        if not values and callable(known):
            values = known(form)
        self.push_screen(bench_form(form, **values))

    def action_return_report(self, loan: str = "") -> None:
        from tracker.ui.screens.report import ReportScreen

        loan = loan or str(getattr(self.screen, "loan", ""))  # from the palette on a loan
        if loan:
            self.push_screen(ReportScreen(loan))
        else:
            self.tell("Open a loan (F2, Enter) and press R for its return report.")

    def action_loan_view(self, view: str) -> None:
        """One of a loan's views (plan, results, scale, ratio, screening) on the loan on screen."""
        from tracker.ui.screens.loan import LoanScreen

        if isinstance(self.screen, LoanScreen):
            self.screen.action_show_view(view)
        else:
            self.tell(
                "Open a loan first (F2, Enter): p plans it, 4 shows its results, 5 its Sr "
                "screening."
            )

    def action_reference_chart(self) -> None:
        from tracker.ui.screens.reference_chart import ReferenceChartScreen

        self.push_screen(ReferenceChartScreen())

    def action_match_names(self) -> None:
        from tracker.ui.screens.session import SessionScreen

        screen = self.screen
        if isinstance(screen, SessionScreen) and screen.session is not None:
            screen.action_match_names()
        else:
            self.tell("Open a session (F4, Enter) and press n to match its rows by name.")

    def action_manifest_import(self, loan: str = "") -> None:
        from tracker.ui.screens.manifest import ManifestScreen

        loan = loan or str(getattr(self.screen, "loan", ""))
        if loan:
            self.push_screen(ManifestScreen(loan))
        else:
            self.tell("Open a loan (F2, Enter) and press I to import its manifest.")

    def get_system_commands(self, screen: Screen[object]) -> Iterable[SystemCommand]:
        yield from super().get_system_commands(screen)
        for title, help_text, action in PALETTE:
            yield SystemCommand(title, help_text, lambda a=action: self.run_action(a))

    # ------------------------------------------------------------------ scanning
    def routes_keys(self) -> bool:
        return self.operator is not None  # the operator picker takes keys as they come

    def find_text(self, text: str) -> None:
        self.scan_lookup(text)

    @work(thread=True, exclusive=True, group="scan")
    def scan_lookup(self, text: str) -> None:
        from tracker.services.labels import handling
        from tracker.services.read import browse

        if self.db is None:
            return
        try:
            view = handling.read_scan(self.db, text)
            batch = (
                browse.batch_of_position(self.db, view.id) if view.kind == "batchposition" else None
            )
        except TrackerError as error:
            self.post_message(ScanFailed(text, error))
            return
        self.post_message(ScanResolved(view, batch))

    def on_scan_resolved(self, event: ScanResolved) -> None:
        self.status_line = f"✓ {event.view.id} · {event.view.what}"
        self.open_id(event.batch or event.view.id)

    def on_scan_failed(self, event: ScanFailed) -> None:
        self.status_line = f"✗ scan {event.text.strip()!r}: {event.error.reason}"
        self.tell(
            event.error.reason,
            title=f"✗ scan not understood: {event.text.strip()}",
            severity="error",
            timeout=8,
        )


def bench_form(form: str, **values: str) -> Screen[None]:
    """The bench form by name, prefilled (e.g. the specimen on screen)."""
    from tracker.ui.screens.aliquot import AliquotScreen
    from tracker.ui.screens.batch_forms import RemovePositionScreen
    from tracker.ui.screens.checkin import CheckInScreen
    from tracker.ui.screens.concentration import ConcentrationScreen
    from tracker.ui.screens.correct_concentration import CorrectConcentrationScreen
    from tracker.ui.screens.correct_recovery import CorrectRecoveryScreen
    from tracker.ui.screens.correct_weighing import CorrectWeighingScreen
    from tracker.ui.screens.dispose import DisposeScreen
    from tracker.ui.screens.dissolve import DissolveScreen
    from tracker.ui.screens.drill import DrillScreen
    from tracker.ui.screens.labels_cancel import CancelLabelsScreen
    from tracker.ui.screens.labels_reprint import ReprintLabelsScreen
    from tracker.ui.screens.loan_amend import AmendLoanScreen
    from tracker.ui.screens.loan_attach import AttachDocumentScreen
    from tracker.ui.screens.loan_close import CloseLoanScreen
    from tracker.ui.screens.loan_curve import ChooseCurveScreen
    from tracker.ui.screens.loan_returned import MarkReturnedScreen
    from tracker.ui.screens.move import MoveScreen
    from tracker.ui.screens.return_specimen import ReturnSpecimenScreen
    from tracker.ui.screens.session_match import MatchRowScreen
    from tracker.ui.screens.shipment import ShipmentScreen
    from tracker.ui.screens.specimen_photo import SpecimenPhotoScreen

    forms: dict[str, type[Screen[None]]] = {
        "checkin": CheckInScreen,
        "drill": DrillScreen,
        "dissolve": DissolveScreen,
        "concentration": ConcentrationScreen,
        "aliquot": AliquotScreen,
        "move": MoveScreen,
        "return": ReturnSpecimenScreen,
        "correct_weighing": CorrectWeighingScreen,
        "correct_concentration": CorrectConcentrationScreen,
        "correct_recovery": CorrectRecoveryScreen,
        "specimen_photo": SpecimenPhotoScreen,
        "dispose": DisposeScreen,
        "shipment": ShipmentScreen,
        "loan_returned": MarkReturnedScreen,
        "loan_close": CloseLoanScreen,
        "loan_amend": AmendLoanScreen,
        "loan_attach": AttachDocumentScreen,
        "loan_curve": ChooseCurveScreen,
        "labels_cancel": CancelLabelsScreen,
        "batch_remove": RemovePositionScreen,
        "labels_reprint": ReprintLabelsScreen,
        "match_row": MatchRowScreen,
    }
    if form not in forms:
        raise InputError("form", form, f"is not one of {', '.join(forms)}")
    return forms[form](**values)


# Every action in the command palette: title, what it does, the action it runs.
PALETTE: list[tuple[str, str, str]] = [
    ("Check in a specimen", "Scan a listed specimen as it arrives (key c)", "bench('checkin')"),
    (
        "Drill a specimen",
        "Tare, gross, live allowance; refused over the limit (key d)",
        "bench('drill')",
    ),
    (
        "Dissolve a powder",
        "Powder into acid, solution weighed by difference (key s)",
        "bench('dissolve')",
    ),
    (
        "Record a concentration",
        "Element mass fraction of a solution (key k)",
        "bench('concentration')",
    ),
    ("Take an aliquot", "Weigh out part of a solution (key a)", "bench('aliquot')"),
    ("Move an item", "Scan an item and its new place (key m)", "bench('move')"),
    ("Return a specimen", "Send a specimen back to its lender", "bench('return')"),
    (
        "Correct a weighing",
        "A powder, solution or aliquot weighed again, with the reason",
        "bench('correct_weighing')",
    ),
    (
        "Correct a concentration",
        "A solution's element mass fraction, with the reason; loads and results follow",
        "bench('correct_concentration')",
    ),
    (
        "Correct a column recovery",
        "The element recovered in a cut, with the reason; yields and results follow",
        "bench('correct_recovery')",
    ),
    (
        "Attach a specimen photo",
        "A photograph of its condition on arrival, on return or otherwise",
        "bench('specimen_photo')",
    ),
    (
        "Return or dispose of a vial",
        "Powder or solution returned, destroyed, retained or used up",
        "bench('dispose')",
    ),
    ("Record a shipment", "A parcel to or from a lender", "bench('shipment')"),
    ("Mark a loan returned", "Every specimen has gone back", "bench('loan_returned')"),
    ("Amend a loan's terms", "Managers: extension, allowance, tissues", "bench('loan_amend')"),
    ("Close a loan", "Managers: the lab's obligations are met", "bench('loan_close')"),
    (
        "Attach a document to a loan",
        "Agreement, amendment, letter or photo, kept by its SHA-256",
        "bench('loan_attach')",
    ),
    ("Loans overview", "Open loans by urgency (F2)", "loans"),
    ("Column batches", "Build a batch by scanning aliquots; recoveries and yields (F3)", "batches"),
    (
        "Remove a column from a batch",
        "Scanned by mistake, nothing collected yet; with the reason (F3, then Ctrl+D)",
        "bench('batch_remove')",
    ),
    ("Instrument sessions", "Import an export, reduce, see QC and drift (F4)", "sessions"),
    (
        "Match an instrument row",
        "Say what an unmatched row measured: its cut (F4, a session, m)",
        "bench('match_row')",
    ),
    (
        "Match rows by catalogue number",
        "Open a session (F4, Enter), then n: rows named by a specimen's catalogue number",
        "match_names",
    ),
    (
        "Reference material control chart",
        "Session means against the lab's long-term limits (F4, then l)",
        "reference_chart",
    ),
    ("Labels", "Queue, choose, preview on a stock, print (F5)", "labels"),
    (
        "Cancel queued labels",
        "Labels that will not be printed, with the reason",
        "bench('labels_cancel')",
    ),
    (
        "Reprint labels",
        "Named items' labels again, with the reason; asked first (F5, then R)",
        "bench('labels_reprint')",
    ),
    ("Ledger", "Browse, filter, verify the chain (F6)", "ledger"),
    (
        "Export the ledger",
        "Every event as JSON Lines, in a new file (F6, then e)",
        "ledger('export')",
    ),
    (
        "Anchor the ledger",
        "Its head, signed, in a new file to keep (F6, then h)",
        "ledger('anchor')",
    ),
    ("Switch operator", "Who is recording (Ctrl+O)", "choose_operator"),
    ("Help", "Keys and a walk through every task (F1)", "help"),
    ("Return report", "Open a loan, then R: the report for its lender", "return_report"),
    ("Import a manifest", "Open a loan, then I: the lender's specimen list", "manifest_import"),
    (
        "Plan a loan's drilling",
        "On a loan: what each specimen still needs, with every option (key p)",
        "loan_view('plan')",
    ),
    (
        "Results of a loan",
        "On a loan: each specimen's results with 2SD and n (key 4)",
        "loan_view('results')",
    ),
    (
        "Results on another scale",
        "On a loan: choose a reference scale with accepted values (key v)",
        "loan_view('scale')",
    ),
    (
        "Results on another ratio",
        "On a loan: every δ on one ratio by a mass-dependent law (key r)",
        "loan_view('ratio')",
    ),
    (
        "Sr age screening of a loan",
        "On a loan: measured ⁸⁷Sr/⁸⁶Sr against the curve at each stated age (key 5)",
        "loan_view('screening')",
    ),
    (
        "Choose a loan's Sr curve",
        "The stored curve its specimens are screened against (key u on a loan)",
        "bench('loan_curve')",
    ),
]
