"""The lot edit form: change the selected lot's condition or note (``stock.set_condition`` /
``stock.set_note``, each an 'edit' ledger entry), both in one transaction."""

from __future__ import annotations

from typing import TYPE_CHECKING, ClassVar

from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, Static

from partsdb.lots import CONDITIONS
from tui.form_guard import close_asking, input_values, select_field
from tui.inputs import TextField

if TYPE_CHECKING:
    from partsdb.services.stock import LotView
    from partsdb.storage.database import Database


class LotEditForm(ModalScreen[str | None]):
    """Edit one lot; dismisses with a one-line result, or None if cancelled or unchanged."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, db: Database, lot: LotView) -> None:
        super().__init__()
        self.db = db
        self.lot = lot

    def compose(self) -> ComposeResult:
        lot = self.lot
        with Vertical(id="form-box", classes="form stock-form"):
            yield Static(f"Edit lot: {lot.designation} at {lot.location} ({lot.quantity})",
                         classes="form-title")
            for ident, label, value, hint in (
                    ("condition", "Condition", lot.condition, " / ".join(CONDITIONS)),
                    ("note", "Note", lot.note or "", "")):
                with Horizontal(classes="form-row"):
                    yield Label(label, classes="form-label")
                    yield TextField(value, placeholder=hint, id=f"le-{ident}", compact=True,
                                    classes="form-input")
            yield Static("", id="form-message", classes="form-error")
            with Horizontal(classes="form-buttons"):
                yield Button("Save", id="ok", variant="primary", compact=True)
                yield Button("Cancel", id="cancel", compact=True)

    def on_mount(self) -> None:
        self.query_one("#le-condition", Input).focus()
        self._started = input_values(self)

    @on(Input.Submitted)
    @on(Button.Pressed, "#ok")
    def action_submit(self) -> None:
        from partsdb.errors import PartsdbError
        from partsdb.services import corrections

        lot = self.lot
        condition = self.query_one("#le-condition", Input).value.strip().lower()
        note = self.query_one("#le-note", Input).value.strip()
        changed: list[str] = []
        try:
            with self.db.session() as session:
                if note != (lot.note or ""):
                    corrections.set_note(session, lot.designation, lot.location, note, lot.condition)
                    changed.append("note")
                if condition != lot.condition:
                    corrections.set_condition(session, lot.designation, lot.location, condition,
                                        lot.condition)
                    changed.append(f"condition {lot.condition} -> {condition}")
        except PartsdbError as err:
            message = self.query_one("#form-message", Static)
            message.update(f"REFUSED: {err}; nothing was changed")
            message.add_class("shown")
            field = "condition" if str(err).startswith("condition") else "note"
            select_field(self.query_one(f"#le-{field}", Input))
            return
        self.dismiss(f"Edited {lot.designation} at {lot.location}: {', '.join(changed)}"
                     if changed else None)

    @on(Button.Pressed, "#cancel")
    def action_cancel(self) -> None:
        close_asking(self, self._started)
