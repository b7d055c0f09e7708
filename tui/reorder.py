"""The reorder list as a panel over the Drawers view: what to buy, and for obsolete devices the
best suitable substitute and how many the drawers hold (``services.reorder``)."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, ClassVar

from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import DataTable, Static

if TYPE_CHECKING:
    from partsdb.services.reorder import ReorderLine
    from partsdb.storage.database import Database

HEADERS = ("Device", "Have", "Low", "Target", "Buy", "Obs.", "Substitute", "Held")


class ReorderScreen(ModalScreen[None]):
    """The reorder list; Escape or o closes it."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape,o,q", "close", "Close")]

    def __init__(self, db: Database) -> None:
        super().__init__()
        self.db = db
        self.lines: list[ReorderLine] = []

    def compose(self) -> ComposeResult:
        with Vertical(id="form-box", classes="form reorder-form"):
            yield Static("", id="reorder-title", classes="form-title")
            table: DataTable[Any] = DataTable(id="reorder-table", cursor_type="row",
                                              zebra_stripes=True)
            yield table
            yield Static("At or below the low-stock count; buy up to the target. "
                         "Check a substitute in circuit before fitting it.  Esc closes.",
                         classes="form-hint")

    def on_mount(self) -> None:
        from partsdb.services.reorder import reorder_list

        with self.db.session() as session:
            self.lines = reorder_list(session)
        table = self.query_one("#reorder-table", DataTable)
        table.add_columns(*HEADERS)
        for line in self.lines:
            sub = line.substitute
            table.add_row(line.designation, line.quantity, line.low_stock, line.target,
                          line.to_buy, "yes" if line.obsolete else "",
                          sub.designation if sub else "", sub.in_stock if sub else "")
        n = len(self.lines)
        self.query_one("#reorder-title", Static).update(
            f"Reorder: {n} device{'' if n == 1 else 's'}, "
            f"{sum(line.to_buy for line in self.lines)} parts to buy")
        table.focus()

    def action_close(self) -> None:
        self.dismiss(None)
