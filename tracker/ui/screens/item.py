"""One item: where it came from, its lineage as a tree with masses and yields, its custody
history, and the bench actions that apply to it (prefilled with its ID)."""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any, ClassVar

from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.message import Message
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Static, TabbedContent, TabPane, Tree
from textual.widgets.tree import TreeNode

from tracker.domain.errors import TrackerError
from tracker.domain.ids import BadId, Kind, parse_id
from tracker.present.items import ancestry, node_text
from tracker.services.core.views import Done
from tracker.services.labels import handling
from tracker.services.read import lineage
from tracker.services.read.lineage import ItemDetail, Node
from tracker.ui.context import database, operator, tracker_app
from tracker.ui.messages import Refused, refusal_text
from tracker.ui.plain import shown
from tracker.ui.screens.tabs import TabKeys, tab_keys
from tracker.ui.widgets import event_rows
from tracker.ui.widgets.operator_bar import OperatorBar

# Which field of each bench form the item on screen fills, and the kinds of item that form
# takes there (None: any item).
PREFILL: dict[str, tuple[str, frozenset[Kind] | None]] = {
    "checkin": ("specimen", frozenset({Kind.SPECIMEN})),
    "drill": ("specimen", frozenset({Kind.SPECIMEN})),
    "return": ("specimen", frozenset({Kind.SPECIMEN})),
    "specimen_photo": ("specimen", frozenset({Kind.SPECIMEN})),
    "dissolve": ("powder", frozenset({Kind.POWDER})),
    "concentration": ("solution", frozenset({Kind.SOLUTION})),
    "aliquot": ("solution", frozenset({Kind.SOLUTION})),
    "correct_concentration": ("solution", frozenset({Kind.SOLUTION})),
    "correct_weighing": ("item", frozenset({Kind.POWDER, Kind.SOLUTION, Kind.ALIQUOT})),
    "dispose": ("item", frozenset({Kind.POWDER, Kind.SOLUTION})),
    "correct_recovery": ("cut", frozenset({Kind.CUT})),
    "move": ("item", None),
    "labels_reprint": ("items", None),
}


class ItemScreen(TabKeys, Screen[None]):
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("d", "act('drill')", "Drill", id="item.drill"),
        Binding("s", "act('dissolve')", "Dissolve", id="item.dissolve"),
        Binding("k", "act('concentration')", "Conc.", id="item.concentration"),
        Binding("a", "act('aliquot')", "Aliquot", id="item.aliquot"),
        Binding("m", "act('move')", "Move", id="item.move"),
        Binding("c", "act('checkin')", "Check in", id="item.checkin"),
        Binding("r", "act('return')", "Return", id="item.return"),
        Binding("l", "queue_label", "Label", id="item.label"),
        Binding("escape", "app.previous", "Back", id="item.back"),
        *tab_keys(("tab-lineage", "Lineage"), ("tab-history", "History")),
    ]

    class Loaded(Message):
        def __init__(self, detail: ItemDetail, names: dict[str, str]) -> None:
            super().__init__()
            self.detail, self.names = detail, names

    class LabelQueued(Message):
        def __init__(self, done: Done[Any]) -> None:
            super().__init__()
            self.done = done

    def __init__(self, item_id: str) -> None:
        super().__init__()
        self.item_id = item_id
        self.shown: ItemScreen.Loaded | None = None  # what the screen shows, kept for a resize
        self.nodes: dict[str, Node] = {}  # every step of the lineage shown, by its ID

    def compose(self) -> ComposeResult:
        yield OperatorBar(f"Item {self.item_id}")
        yield Static("loading …", id="item-head")
        with TabbedContent(id="item-tabs"):
            with TabPane("Lineage", id="tab-lineage"):
                yield Tree("lineage", id="lineage")
                yield Static("", id="node-detail")
            with TabPane("Custody history", id="tab-history"):
                yield DataTable(id="history", cursor_type="row", zebra_stripes=True)
        yield Static("", id="outcome")
        yield Footer(compact=True)

    def on_mount(self) -> None:
        self.load()

    def on_resize(self) -> None:
        """The history's action column takes the width the terminal leaves it."""
        if self.shown is not None:
            self._history(self.shown)

    def on_screen_resume(self) -> None:
        self.load()

    @work(thread=True, exclusive=True, group="load")
    def load(self) -> None:
        try:
            db = database(self)
            detail = lineage.show_item(db, self.item_id)
            refs = {r for e in detail.history for r in (e.object, e.parent) if r}
            names = lineage.names_of(db, refs)
        except TrackerError as error:
            self.post_message(Refused(error, "load"))
            return
        self.post_message(self.Loaded(detail, names))

    def on_item_screen_loaded(self, event: Loaded) -> None:
        detail = event.detail
        self.item_id = detail.item.id
        head = Text()
        head.append(shown(f"{detail.item.id}  {detail.item.label}", style="bold"))
        if detail.item.status:
            head.append(f"  · {detail.item.status.replace('_', ' ')}")
        head.append(shown(f"\nfrom: {ancestry(detail.ancestors)}\nwhere: {detail.location or '—'}"))
        self.query_one("#item-head", Static).update(head)
        tree: Tree[str] = self.query_one("#lineage", Tree)
        tree.clear()
        tree.root.set_label(node_text(detail.item))
        tree.root.data = detail.item.id
        self.nodes = dict(_steps(detail.item))
        _grow(tree.root, detail.item)
        tree.root.expand_all()
        cursor = tree.cursor_node
        self._show_detail((cursor.data if cursor is not None else None) or detail.item.id)
        self.shown = event
        self._history(event)

    def _history(self, loaded: Loaded) -> None:
        table = self.query_one("#history", DataTable)
        event_rows.fill(table, loaded.detail.history[::-1], loaded.names, self.size.width)

    def on_refused(self, event: Refused) -> None:
        outcome = self.query_one("#outcome", Static)
        outcome.update(refusal_text(event.error))
        outcome.set_class(True, "-error")

    @on(Tree.NodeHighlighted, "#lineage")
    def _detail(self, event: Tree.NodeHighlighted[str]) -> None:
        """The highlighted step's whole line, wrapped under the tree: a tree line longer
        than the screen runs past its edge, and nothing of it may be out of reach."""
        self._show_detail(event.node.data)

    def _show_detail(self, item_id: str | None) -> None:
        node = self.nodes.get(item_id or "")
        if node is not None:  # a node being built has no ID yet: the last one stays
            self.query_one("#node-detail", Static).update(node_text(node))

    @on(Tree.NodeSelected, "#lineage")
    def _open_node(self, event: Tree.NodeSelected[str]) -> None:
        if event.node.data and event.node.data != self.item_id:
            tracker_app(self).open_id(event.node.data)

    def action_act(self, form: str) -> None:
        """A key asks for this form on this item: its field is filled whatever the kind (the
        service says why not, if the item does not fit)."""
        tracker_app(self).action_bench(form, **{PREFILL[form][0]: self.item_id})

    def prefill(self, form: str) -> dict[str, str]:
        """What a bench form opened here (the palette) takes from this screen: this item,
        where the form takes an item of its kind (see ``TrackerApp.action_bench``)."""
        field, kinds = PREFILL.get(form, ("", None))
        if not field:
            return {}
        try:
            kind = parse_id(self.item_id).kind
        except BadId:  # not loaded yet: named by a catalogue number
            return {}
        return {field: self.item_id} if kinds is None or kind in kinds else {}

    def action_queue_label(self) -> None:
        self.queue_label()

    @work(thread=True, exclusive=True, group="save")
    def queue_label(self) -> None:
        try:
            done = handling.queue_labels(database(self), operator(self), {"items": [self.item_id]})
        except TrackerError as error:
            self.post_message(Refused(error, "label"))
            return
        self.post_message(self.LabelQueued(done))

    def on_item_screen_label_queued(self, event: LabelQueued) -> None:
        outcome = self.query_one("#outcome", Static)
        outcome.set_class(False, "-error")
        outcome.update(shown(f"✓ label queued for {self.item_id} · event #{event.done.event_seq}"))


def _steps(node: Node) -> Iterator[tuple[str, Node]]:
    """Every step of a lineage with its ID, the node first."""
    yield node.id, node
    for child in node.children:
        yield from _steps(child)


def _grow(parent: TreeNode[str], node: Node) -> None:
    for child in node.children:
        branch = parent.add(node_text(child), data=child.id, expand=True)
        _grow(branch, child)
    if not node.children:
        parent.allow_expand = False
