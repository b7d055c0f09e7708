"""What every form shares: Escape asks before throwing typed changes away, and a refused field
is focused with its text selected (typing replaces it)."""

from __future__ import annotations

from typing import ClassVar

from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Static


class ConfirmDiscard(ModalScreen[bool]):
    """"Discard the changes?": y / Enter discards, n / Escape goes back to the form."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("y", "answer(True)", "Discard"), Binding("n,escape", "answer(False)", "Keep editing")]

    def compose(self) -> ComposeResult:
        with Vertical(id="form-box", classes="form confirm-form"):
            yield Static("Discard the changes typed in this form?  (y / n)", classes="form-title")
            with Horizontal(classes="form-buttons"):
                yield Button("Discard", id="discard", variant="error", compact=True)
                yield Button("Keep editing", id="keep", variant="primary", compact=True)

    def on_mount(self) -> None:
        self.query_one("#keep", Button).focus()

    def action_answer(self, discard: bool) -> None:
        self.dismiss(discard)

    @on(Button.Pressed, "#discard")
    def _discard(self) -> None:
        self.dismiss(True)

    @on(Button.Pressed, "#keep")
    def _keep(self) -> None:
        self.dismiss(False)


def input_values(screen: ModalScreen[object]) -> dict[str, str]:
    """Every input's text by id: the form's state, to compare with how it started."""
    return {str(i.id): i.value for i in screen.query(Input)}


def close_asking(screen: ModalScreen[object], started: dict[str, str]) -> None:
    """Dismiss ``screen`` with None, asking first when any input differs from ``started``."""
    if input_values(screen) == started:
        screen.dismiss(None)
        return

    def answered(discard: bool | None) -> None:
        if discard:
            screen.dismiss(None)

    screen.app.push_screen(ConfirmDiscard(), answered)


def select_field(field: Input) -> None:
    """Focus ``field`` with all its text selected, so typing replaces the refused value."""
    field.focus()
    field.select_all()


class Confirm(ModalScreen[bool]):
    """A yes/no question that says what will happen: y / Enter on "yes" agrees, n / Escape
    declines (the safe answer has the focus)."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("y", "answer(True)", "Yes"), Binding("n,escape", "answer(False)", "No")]

    def __init__(self, question: str, yes: str = "Yes", no: str = "No") -> None:
        super().__init__()
        self.question = question
        self.yes = yes
        self.no = no

    def compose(self) -> ComposeResult:
        with Vertical(id="form-box", classes="form confirm-form"):
            yield Static(f"{self.question}  (y / n)", id="confirm-question", classes="form-title")
            with Horizontal(classes="form-buttons"):
                yield Button(self.yes, id="yes", variant="warning", compact=True)
                yield Button(self.no, id="no", variant="primary", compact=True)

    def on_mount(self) -> None:
        self.query_one("#no", Button).focus()

    def action_answer(self, yes: bool) -> None:
        self.dismiss(yes)

    @on(Button.Pressed, "#yes")
    def _yes(self) -> None:
        self.dismiss(True)

    @on(Button.Pressed, "#no")
    def _no(self) -> None:
        self.dismiss(False)
