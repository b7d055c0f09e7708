"""The Drawers view: the cabinet/drawer/bin tree beside the lots held at the selected place.

The lots come from ``stock.lots_at`` (the place and everything below it); the five stock actions
open :class:`~tui.stock_forms.StockForm` on the selected lot and the list is re-read as soon as
the form reports success.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, ClassVar

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical
from textual.widgets import DataTable, Static, Tree

from tui.form_guard import Confirm
from tui.stock_forms import StockForm, StockRequest

if TYPE_CHECKING:
    from partsdb.services.stock import LotView
    from partsdb.storage.database import Database

ALL_PLACES = "All places"


class DrawersView(Horizontal):
    """Place tree on the left, lots of the selected place on the right."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("r", "stock('receive')", "Receive"),
        Binding("t", "stock('take')", "Take"),
        Binding("u", "stock('return')", "Return"),
        Binding("m", "stock('move')", "Move"),
        Binding("c", "stock('count')", "Count"),
        Binding("e", "edit_lot", "Edit", show=False),
        Binding("z", "undo", "Undo"),
        Binding("o", "reorder", "Reorder"),
    ]

    def __init__(self, db: Database, **kwargs: Any) -> None:
        super().__init__(**kwargs)
        self.db = db
        self.place: str | None = None
        self.lots: list[LotView] = []
        self.lots_shown: list[LotView] = []
        self.low_devices = 0
        """Devices below their low-stock mark in the title's count (tests read it)."""
        self._loaded = False
        self._paths: tuple[list[str], dict[str, str]] | None = None
        self._restoring: str | None = None

    def compose(self) -> ComposeResult:
        tree: Tree[str | None] = Tree(ALL_PLACES, data=None, id="drawer-tree")
        tree.show_root = True
        yield tree
        with Vertical(id="lots-box"):
            yield Static("", id="lots-title")
            table: DataTable[Any] = DataTable(id="lots-table", cursor_type="row", zebra_stripes=True)
            yield table
            yield Static("", id="lot-status")

    def on_mount(self) -> None:
        table = self.query_one("#lots-table", DataTable)
        table.add_column("Device", key="device")
        table.add_column("Place", key="place")
        table.add_column("Cond.", key="cond")
        table.add_column("Qty", key="qty")
        table.add_column("Stock", key="low")

    def load(self) -> None:
        if not self._loaded:
            self._loaded = True
            self.reload()

    def refresh_data(self, visible: bool) -> None:
        """The database changed: re-read now if shown, else when next shown."""
        if visible and self._loaded:
            self.reload()
        else:
            self._loaded = False

    def reload(self) -> None:
        """Re-read the place tree and the lots (after any stock change), staying on the place
        and the lot that were selected."""
        from partsdb.services import stock

        with self.db.session() as session:
            paths = stock.location_paths(session)
            labels = stock.place_labels(session)
        tree = self.query_one("#drawer-tree", Tree)
        if (paths, labels) == self._paths:  # the usual case: same places, new quantities
            self.show_lots(self.place)
            return
        self._paths = (paths, labels)
        place = self.place
        tree.clear()
        nodes: dict[str, Any] = {}
        parents = {path.rpartition("/")[0] for path in paths}
        for path in paths:
            parent_path, _, name = path.rpartition("/")
            parent = nodes.get(parent_path, tree.root)
            label = Text(name)
            if path in labels:
                label.append(f" {labels[path]}", style="dim italic")
            if path in parents:  # cabinets open, drawers closed: the tree fits a small screen
                nodes[path] = parent.add(label, data=path, expand="/" not in path)
            else:
                nodes[path] = parent.add_leaf(label, data=path)
        tree.root.expand()
        if place not in nodes:
            place = None
        self.show_lots(place)
        if place is not None:
            node = nodes[place]
            ancestor = node.parent
            while ancestor is not None:
                ancestor.expand()
                ancestor = ancestor.parent
            # The tree numbers its lines on the next refresh; until then a node has no line to
            # put the cursor on, and the tree's own highlight (of the new root) must not win.
            self._restoring = place
            self.call_after_refresh(self._restore_place, node)

    def _restore_place(self, node: Any) -> None:
        self.query_one("#drawer-tree", Tree).move_cursor(node)
        self._restoring = None

    def show_lots(self, place: str | None) -> None:
        from partsdb.services import stock

        self.place = place
        with self.db.session() as session:
            self.lots = stock.lots_at(session, place)
        table = self.query_one("#lots-table", DataTable)
        row = table.cursor_row
        before = self.lots_shown[row] if 0 <= row < len(self.lots_shown) else None
        table.clear()
        for i, lot in enumerate(self.lots):
            mark = Text("LOW", style="bold red") if lot.low else Text("ok", style="green")
            qty = Text(str(lot.quantity), style="dim" if lot.quantity == 0 else "",
                       justify="right")
            table.add_row(lot.designation, lot.location, lot.condition, qty, mark, key=str(i))
        self.lots_shown = list(self.lots)
        if self.lots:
            # Stay on the same lot (device, place, condition) when it is still listed.
            same = next((i for i, lot in enumerate(self.lots) if before is not None and
                         (lot.designation, lot.location, lot.condition)
                         == (before.designation, before.location, before.condition)), None)
            table.move_cursor(row=same if same is not None else min(row, len(self.lots) - 1))
        total = sum(lot.quantity for lot in self.lots)
        # Devices, not lots (as `partsdb stock low`): a device is low when its stock summed
        # over every place is below its mark, however many lots it has here.
        if place is None:
            with self.db.session() as session:
                low = len(stock.low_stock(session))
        else:
            low = len({lot.designation for lot in self.lots if lot.low})
        label = self._paths[1].get(place) if self._paths is not None and place else None
        self.query_one("#lots-title", Static).update(
            f"{place or ALL_PLACES}" + (f" ({label})" if label else "")
            + f": {len(self.lots)} lots, {total} parts"
            + (f", {low} device{'s' if low != 1 else ''} LOW" if low else ""))
        self.low_devices = low

    @on(Tree.NodeHighlighted, "#drawer-tree")
    def _place_highlighted(self, event: Tree.NodeHighlighted[str | None]) -> None:
        if self._restoring is not None and event.node.data != self._restoring:
            return  # the rebuilt tree's first highlight, before the cursor is put back
        if event.node.data != self.place:
            self.show_lots(event.node.data)

    def selected_lot(self) -> LotView | None:
        table = self.query_one("#lots-table", DataTable)
        if not self.lots or table.cursor_row < 0 or table.cursor_row >= len(self.lots):
            return None
        return self.lots[table.cursor_row]

    def action_stock(self, action: str) -> None:
        lot = self.selected_lot()
        if lot is None and action != "receive":
            self.notify(f"Select a lot to {action} first.", severity="warning")
            return
        if lot is None:
            request = StockRequest(action, place=self.place or "")
        elif action == "receive":
            request = StockRequest(action, lot.designation, lot.location, lot.condition)
        else:
            request = StockRequest(action, lot.designation, lot.location, lot.condition,
                                   lot.quantity)
        self.app.push_screen(StockForm(self.db, request), self._after)

    def action_edit_lot(self) -> None:
        from tui.lot_edit import LotEditForm

        lot = self.selected_lot()
        if lot is None:
            self.notify("Select a lot to edit first.", severity="warning")
            return
        self.app.push_screen(LotEditForm(self.db, lot), self._after)

    def action_undo(self) -> None:
        """Undo the last movement, after a confirmation that names what it reverses."""
        from partsdb.services import corrections

        with self.db.session() as session:
            last = corrections.last_undoable(session)
        if last is None:
            self.notify("Nothing to undo.", severity="warning")
            return
        pair = " (and the other half of the move)" if last.reason == "move" else ""
        question = (f"Undo {last.describe()}{pair}? A compensating entry is written to the "
                    "ledger; nothing is erased.")

        def answered(yes: bool | None) -> None:
            if yes:
                self._undo(last.id)

        self.app.push_screen(Confirm(question, yes="Undo it", no="Keep"), answered)

    def _undo(self, movement_id: int) -> None:
        from partsdb.errors import PartsdbError
        from partsdb.services import corrections

        try:
            report = self.db.transact(lambda session: corrections.undo(session, movement_id))
        except PartsdbError as err:
            self.notify(str(err), severity="error")
            return
        self._after("Undone: " + "; ".join(e.describe() for e in report.undone))

    def action_reorder(self) -> None:
        from tui.reorder import ReorderScreen

        self.app.push_screen(ReorderScreen(self.db))

    def _after(self, result: str | None) -> None:
        if result is None:
            return
        absorb = getattr(self.app, "absorb_own_change", None)
        if absorb is not None:
            absorb()
        self.reload()
        self.query_one("#lot-status", Static).update(result)
        self.notify(result)
