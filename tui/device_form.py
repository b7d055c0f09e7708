"""Add or edit a device: one input per field of ``partsdb.device.FIELDS``, units accepted.

Each field is checked as it is typed (``parse_field``) and the whole record again on save
(``catalog.add_device`` / ``catalog.edit_device``); any problem is shown beside its field and
nothing is written until the record is valid.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, ClassVar

from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, Static

from partsdb.device import FIELDS, Device, FieldSpec, applies
from tui.form_guard import close_asking, input_values, select_field
from tui.inputs import TextField
from tui.wording import in_labels

if TYPE_CHECKING:
    from partsdb.storage.database import Database


EXAMPLES: dict[str, str] = {
    "vceo": "40V", "vcbo": "60V", "vebo": "5V", "ic_max": "200mA", "ptot": "625mW",
    "tj_max": "150 °C", "hfe_min": "110", "hfe_max": "450", "hfe_ic": "2mA", "ft": "300MHz",
    "vbe_on": "0.65V", "vbe_ic": "2mA", "vce_sat": "0.2V", "icbo": "15nA",
    "rth_jc": "1.5K/W", "vds": "100V", "vgs_max": "20V", "id_max": "30A", "rds_on": "28mΩ",
    "rds_on_vgs": "10V", "rds_on_id": "15A", "vgs_th_min": "2V", "vgs_th_max": "4V",
    "qg": "25nC", "qgd": "8nC", "ciss": "1.2nF", "trr": "60ns", "vgs_off_min": "0.4V",
    "vgs_off_max": "2.5V", "idss_min": "2mA", "idss_max": "6mA", "yfs": "12mS", "yfs_id": "2mA",
    "en": "2nV/√Hz",
}
"""The example shown in each quantity field: a small-signal silicon part's usual figure in the
field's own unit (common practice: small-signal silicon for bipolar fields, a power MOSFET's
and an audio JFET's for the FET fields), so no hint contradicts its field."""
HINT_WIDTH = 56
"""Characters of a help text shown as a hint (the form's field width at 80 columns)."""


def placeholder(spec: FieldSpec) -> str:
    if spec.choices:
        return " / ".join(spec.choices)
    if spec.kind == "bool":
        return "yes / no"
    if spec.kind == "flag":
        return "yes / no / blank"
    if spec.kind == "quantity":
        example = EXAMPLES.get(spec.name)
        return f"e.g. {example}" if example else spec.unit
    text = spec.help or ""
    if len(text) > HINT_WIDTH:  # cut at a word, and say so
        text = text[:HINT_WIDTH - 1].rsplit(" ", 1)[0].rstrip(",;") + "…"
    return text


class DeviceForm(ModalScreen[Device | None]):
    """A modal form; dismisses with the saved :class:`Device`, or None when cancelled."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "cancel", "Cancel"), Binding("ctrl+s", "save", "Save")]

    def __init__(self, db: Database, device: Device | None) -> None:
        super().__init__()
        self.db = db
        self.original = device
        self._kind = device.kind if device is not None else "bjt"

    def compose(self) -> ComposeResult:
        title = f"Edit {self.original.designation}" if self.original else "Add a device"
        with Vertical(id="form-box", classes="form device-form"):
            yield Static(title + "  (units accepted: 40V, 200mA, 2k2; ctrl+s saves)",
                         classes="form-title")
            with VerticalScroll(id="form-fields"):
                for spec in FIELDS:
                    value = ""
                    if self.original is not None:
                        shown = self.original.display(spec.name)
                        value = "" if shown == "—" else shown
                    elif spec.name in ("kind", "polarity", "material"):
                        value = spec.choices[0]
                    with Horizontal(classes="form-row", id=f"row-{spec.name}"):
                        yield Label(spec.label + (" *" if spec.required else ""),
                                    classes="form-label")
                        yield TextField(value, placeholder=placeholder(spec), id=f"fd-{spec.name}",
                                    compact=True, classes="form-input")
                    yield Static("", id=f"err-{spec.name}", classes="form-error")
            yield Static("", id="form-message", classes="form-error")
            with Horizontal(classes="form-buttons"):
                yield Button("Save", id="save", variant="primary", compact=True)
                yield Button("Cancel", id="cancel", compact=True)

    def on_mount(self) -> None:
        self.query_one(f"#fd-{FIELDS[0].name}", Input).focus()
        self._show_kind(self._kind)
        self._started = input_values(self)

    def _show_kind(self, kind: str) -> None:
        """Only the fields of the record's kind are shown (bipolar, MOSFET or JFET)."""
        for spec in FIELDS:
            shown = applies(spec, kind)
            self.query_one(f"#row-{spec.name}").display = shown
            if not shown:
                self.query_one(f"#err-{spec.name}").display = False
            else:
                self.query_one(f"#err-{spec.name}").display = True

    def raw_values(self) -> dict[str, Any]:
        """The inputs; a field the kind does not carry is sent blank, so a record whose kind
        changed drops the old kind's values instead of being refused for them."""
        return {spec.name: (self.query_one(f"#fd-{spec.name}", Input).value
                            if applies(spec, self._kind) else "") for spec in FIELDS}

    def _show(self, field: str, message: str) -> None:
        box = self.query_one(f"#err-{field}", Static)
        box.update(in_labels(message))
        box.set_class(bool(message), "shown")

    @on(Input.Changed, ".form-input")
    def _check_field(self, event: Input.Changed) -> None:
        from partsdb.device import parse_field
        from partsdb.units import UnitError

        name = (event.input.id or "")[3:]
        try:
            value = parse_field(name, event.value)
        except UnitError as err:
            self._show(name, str(err))
        else:
            self._show(name, "")
            if name == "kind" and value != self._kind:
                self._kind = value
                self._show_kind(value)

    @on(Input.Submitted, ".form-input")
    def _submitted(self) -> None:
        self.action_save()

    @on(Button.Pressed, "#save")
    def _save_pressed(self) -> None:
        self.action_save()

    @on(Button.Pressed, "#cancel")
    def action_cancel(self) -> None:
        close_asking(self, self._started)

    def action_save(self) -> None:
        from partsdb.device import InvalidRecord, parse_device
        from partsdb.services import catalog
        from partsdb.storage.database import DatabaseError
        from partsdb.units import UnitError

        for spec in FIELDS:
            self._show(spec.name, "")
        message = self.query_one("#form-message", Static)
        raw = self.raw_values()
        try:
            if self.original is None:
                device = parse_device(raw)
                with self.db.session() as session:
                    saved = catalog.add_device(session, device)
            else:
                with self.db.session() as session:
                    saved = catalog.edit_device(session, self.original.designation, raw)
        except InvalidRecord as err:
            first = None
            for field, text in err.problems:
                if field in raw:
                    self._show(field, text)
                    first = first or field
            message.update(f"Not saved: {len(err.problems)} problem(s) to fix.")
            if first:
                select_field(self.query_one(f"#fd-{first}", Input))
            return
        except (UnitError, ValueError, LookupError, DatabaseError) as err:
            # CatalogError (duplicate designation), NotFound, ReadOnlyError: nothing written.
            message.update(f"Not saved: {err}")
            field = next((spec.name for spec in FIELDS
                          if str(err).lower().startswith(spec.name)), None)
            if field is None and "designation" in str(err).lower():
                field = "designation"
            if field is not None:
                select_field(self.query_one(f"#fd-{field}", Input))
            return
        self.dismiss(saved)
