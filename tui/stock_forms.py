"""Small modal forms for the five stock actions: receive, take, return, move and count.

The form checks every field it can (a device named, a whole quantity, well-formed places, a
known condition) and lists every problem at once, each beside its field; only then does it make
exactly one call to :mod:`partsdb.services.stock` in one transaction. A refusal from the service
(taking more than the drawer holds, an unknown device) is shown beside the field it concerns,
whose text is selected, and nothing is changed: the transaction is rolled back. Escape on a
form with changes asks before discarding them.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, ClassVar

from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, Static

from partsdb.lots import CONDITIONS
from tui.form_guard import Confirm, close_asking, input_values, select_field
from tui.inputs import TextField

if TYPE_CHECKING:
    from partsdb.storage.database import Database

ACTIONS = ("receive", "take", "return", "move", "count")


@dataclass(frozen=True)
class StockRequest:
    """What the form was opened with: the action and the selected lot's details."""

    action: str
    designation: str = ""
    place: str = ""
    condition: str = ""
    quantity: int | None = None
    """The lot's current quantity (shown; a count starts from it)."""


def _job_required() -> bool:
    """The config's ``[stock] require_job``; a broken config file is reported when the take is
    made (check_job), not here."""
    from partsdb.services.config import job_required

    try:
        return job_required()
    except ValueError:
        return False


def check_job(job: str | None) -> None:
    from partsdb.services.config import check_job as check

    check(job)


def parse_count(text: str, allow_zero: bool) -> int:
    """A whole number of parts from the form within the one quantity limit (limits.py), or
    LimitError (a ValueError) naming what was expected: "inf" or 20 digits are refused, never
    raised past the form."""
    from partsdb.limits import check_quantity

    return check_quantity(text, allow_zero=allow_zero)


class StockForm(ModalScreen[str | None]):
    """One stock action as a form; dismisses with a one-line result, or None if cancelled."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, db: Database, request: StockRequest) -> None:
        super().__init__()
        self.db = db
        self.request = request
        self.job_required = request.action == "take" and _job_required()
        """This shop's config requires a job reference on every take: the form asks for it."""

    def _fields(self) -> list[tuple[str, str, str, str]]:
        """(id, label, initial value, placeholder) for this action."""
        r = self.request
        place_label = {"receive": "To place", "take": "From place", "return": "To place",
                       "move": "From place", "count": "At place"}[r.action]
        fields = [("designation", "Device", r.designation, "e.g. OC375"),
                  ("quantity", "Quantity",
                   str(r.quantity) if r.action == "count" and r.quantity is not None else "",
                   "whole number"),
                  ("place", place_label, r.place, "e.g. C1/D3")]
        if r.action == "move":
            fields.append(("to", "To place", "", "e.g. C2/D1"))
        if r.action in ("receive", "count", "take", "return", "move"):
            fields.append(("condition", "Condition", r.condition if r.action != "receive"
                           else (r.condition or "new"), " / ".join(CONDITIONS)))
        if r.action in ("take", "return", "receive", "move"):
            fields.append(("job", "Job ref.", "", "required: job or repair ticket"
                           if self.job_required else "job or repair ticket"))
        fields.append(("note", "Note", "", ""))
        return fields

    def compose(self) -> ComposeResult:
        r = self.request
        held = "" if r.quantity is None else f"  (lot holds {r.quantity})"
        if self.job_required:
            held += "  (job reference required)"
        with Vertical(id="form-box", classes="form stock-form"):
            yield Static(f"{r.action.capitalize()} parts{held}", classes="form-title")
            for ident, label, value, hint in self._fields():
                with Horizontal(classes="form-row"):
                    yield Label(label, classes="form-label")
                    yield TextField(value, placeholder=hint, id=f"sf-{ident}", compact=True,
                                classes="form-input")
                yield Static("", id=f"sfe-{ident}", classes="form-error")
            yield Static("", id="form-message", classes="form-error")
            with Horizontal(classes="form-buttons"):
                yield Button(r.action.capitalize(), id="ok", variant="primary", compact=True)
                yield Button("Cancel", id="cancel", compact=True)

    def on_mount(self) -> None:
        self.query_one("#sf-quantity" if self.request.designation else "#sf-designation",
                       Input).focus()
        self._started = input_values(self)

    def value(self, ident: str) -> str | None:
        found = self.query(f"#sf-{ident}")
        if not found:
            return None
        text = found.first(Input).value.strip()
        return text or None

    def problems(self) -> list[tuple[str, str]]:
        """Every problem the form can see, as (field id, message), in the fields' order."""
        from partsdb.services import stock

        action = self.request.action
        found: list[tuple[str, str]] = []
        if not self.value("designation"):
            found.append(("designation", "device: empty; expected a designation such as OC375"))
        try:
            parse_count(self.value("quantity") or "", allow_zero=action == "count")
        except ValueError as err:
            found.append(("quantity", str(err)))
        for ident, name, example in (("place", "place", "C1/D3"), ("to", "to place", "C2/D1")):
            if ident == "to" and action != "move":
                continue
            text = self.value(ident)
            if not text:
                found.append((ident, f"{name}: empty; expected a path such as {example}"))
                continue
            try:
                stock.normalize_path(text)
            except ValueError as err:
                found.append((ident, str(err).replace("location:", f"{name}:", 1)))
        condition = self.value("condition")
        if condition and condition.lower() not in stock.CONDITIONS:
            found.append(("condition", f"condition: {condition!r} is not valid; expected one of "
                          + ", ".join(stock.CONDITIONS)))
        if action == "take":  # the CLI's rule (a broken config file is reported here too)
            try:
                check_job(self.value("job"))
            except ValueError as err:
                found.append(("job", str(err)))
        return found

    def _show_problems(self, found: list[tuple[str, str]]) -> None:
        shown = {ident for ident, _ in found}
        for box in self.query(".form-error"):
            ident = (box.id or "")[4:]
            if ident not in shown:
                box.update("")
                box.remove_class("shown")
        for ident, text in found:
            box = self.query_one(f"#sfe-{ident}", Static)
            box.update(text)
            box.add_class("shown")
        if found:
            select_field(self.query_one(f"#sf-{found[0][0]}", Input))

    def _field_of(self, message: str) -> str:
        """Which field a service refusal is about (its message names it), else the device."""
        lower = message.lower()
        to = (self.value("to") or "").lower()
        if lower.startswith("move: from and to") or (to and "location:" in lower and to in lower):
            return "to"
        for prefix, ident in (("quantity", "quantity"), ("cannot", "quantity"),
                              ("location", "place"), ("condition", "condition")):
            if lower.startswith(prefix):
                return ident
        if " at " in lower and "condition" in lower:  # held in several conditions
            return "condition"
        if "no " in lower and " lot at " in lower:
            return "condition"
        if "nothing at" in lower or "location " in lower:
            return "place"
        return "designation"

    @on(Input.Submitted)
    @on(Button.Pressed, "#ok")
    def action_submit(self) -> None:
        message = self.query_one("#form-message", Static)
        found = self.problems()
        self._show_problems(found)
        if found:
            names = ", ".join(text.split(":", 1)[0] for _, text in found)
            message.update(f"Not done: {len(found)} problem{'s' if len(found) > 1 else ''} "
                           f"to fix ({names}); nothing was changed.")
            message.add_class("shown")
            return
        self._save(create=False)

    def _save(self, create: bool) -> None:
        from partsdb.services.stock import UnknownPlace

        message = self.query_one("#form-message", Static)
        try:
            result = self._perform(create)
        except UnknownPlace as err:
            # Typed places are not made silently: ask, naming the closest existing ones.
            refusal = str(err)
            close = f" Closest: {', '.join(err.suggestions)}." if err.suggestions else ""
            question = f"Place {err.path} does not exist.{close} Create {err.path}?"

            def answered(yes: bool | None) -> None:
                if yes:
                    self._save(create=True)
                else:
                    message.update(f"REFUSED: {refusal}; nothing was changed")
                    message.add_class("shown")
                    field = "to" if self.request.action == "move" else "place"
                    select_field(self.query_one(f"#sf-{field}", Input))

            self.app.push_screen(Confirm(question, yes=f"Create {err.path}", no="Back"),
                                 answered)
            return
        except Exception as err:  # the service's refusal, shown as is: nothing was changed
            from partsdb.errors import PartsdbError

            if not isinstance(err, ValueError | LookupError | PartsdbError):
                raise
            text = str(err.args[0]) if isinstance(err, KeyError) and err.args else str(err)
            message.update(f"REFUSED: {text}")
            message.add_class("shown")
            select_field(self.query_one(f"#sf-{self._field_of(text)}", Input))
            return
        self.dismiss(result)

    @on(Button.Pressed, "#cancel")
    def action_cancel(self) -> None:
        close_asking(self, self._started)

    def _perform(self, create: bool = False) -> str:
        from partsdb.services import stock

        action = self.request.action
        designation = self.value("designation")
        if not designation:
            raise ValueError("device: empty; expected a designation such as OC375")
        qty = parse_count(self.value("quantity") or "", allow_zero=action == "count")
        place = self.value("place")
        if not place:
            raise ValueError("place: empty; expected a path such as C1/D3")
        condition = self.value("condition")
        job, note = self.value("job"), self.value("note")
        with self.db.session() as session:
            if action == "receive":
                lot = stock.receive(session, designation, qty, place, condition or "new", job=job,
                                    note=note, create=create)
                return f"Received {qty} {lot.designation} into {lot.location}: now {lot.quantity}"
            if action == "take":
                lot = stock.take(session, designation, qty, place, condition, job=job, note=note)
                return (f"Took {qty} {lot.designation} from {lot.location}"
                        + (f" for {job}" if job else "") + f": {lot.quantity} left")
            if action == "return":
                lot = stock.return_parts(session, designation, qty, place, condition, job=job,
                                         note=note, create=create)
                return f"Returned {qty} {lot.designation} to {lot.location}: now {lot.quantity}"
            if action == "move":
                to = self.value("to")
                if not to:
                    raise ValueError("to place: empty; expected a path such as C2/D1")
                source, target = stock.move(session, designation, qty, place, to, condition,
                                            job=job, note=note, create=create)
                return (f"Moved {qty} {source.designation} {source.location} -> "
                        f"{target.location}: {source.quantity} / {target.quantity}")
            lot, change = stock.count(session, designation, qty, place, condition, job=job,
                                      note=note)
            return f"Counted {lot.designation} at {lot.location}: {lot.quantity} ({change:+d})"
