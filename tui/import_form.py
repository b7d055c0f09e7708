"""Import a parts sheet from the Devices view: a path, a preview, then a confirm.

The preview is :func:`partsdb.services.sheet.import_sheet` with ``dry_run=True`` (it reads and
checks everything and writes nothing): the mapped columns, the first devices as they will be
stored, what would be added/updated/left alone, every warning and assumed value. Import runs
the same service for real, all or nothing; a refused file is shown line by line and nothing
is written.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, ClassVar

from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Button, Checkbox, Input, Label, Static

from partsdb.device import FIELD_BY_NAME, Device
from tui.inputs import TextField
from tui.wording import in_labels

if TYPE_CHECKING:
    from partsdb.services.sheet import SheetReport
    from partsdb.storage.database import Database

PREVIEW_FIELDS = ("designation", "polarity", "vceo", "ic_max", "ptot", "ptot_ref", "package")
CAUTION = "Warnings are prompts to check the datasheet, never ratings."


def field_label(name: str) -> str:
    """A field as the user reads it: its engineering label (Ic max), not its key."""
    spec = FIELD_BY_NAME.get(name)
    return spec.label if spec is not None else name.replace("_", " ")


def describe(report: SheetReport, limit: int = 40) -> str:
    """The preview as plain lines (columns, first devices as stored, counts, notes)."""
    lines = ["Columns: " + ", ".join(
        f"{c.header} -> {field_label(c.field)}" + (f" [{c.unit}]" if c.unit else "") if c.field
        else f"{c.header} (ignored)" for c in report.columns)]
    lines.append("First devices as they will be stored ("
                 + ", ".join(field_label(name) for name in PREVIEW_FIELDS) + "):")
    for row in report.preview:
        device = Device(**{k: v for k, v in row.items() if k != "line"})
        lines.append(f"  line {row['line']}: " + "  ".join(
            device.display(name) for name in PREVIEW_FIELDS))
    lines.append(report.summary())
    notes = [f"note: {n}" for n in report.notices]
    notes += [f"assumed: line {r['line']}: {r['designation']}: "
              + in_labels(", ".join(r["assumed"]))
              for r in report.assumed]
    notes += [f"warning: line {r['line']}: {r['designation']}: {r['message']}"
              for r in report.warnings]
    if len(notes) > limit:
        notes = [*notes[:limit], f"... and {len(notes) - limit} more"]
    if report.warnings:
        notes.append(CAUTION)
    return "\n".join(lines + notes)


class ImportForm(ModalScreen[str | None]):
    """Pick a sheet, preview it, import it; dismisses with a one-line result or None."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, db: Database, path: str = "") -> None:
        super().__init__()
        self.db = db
        self.path = path
        self.previewed: str | None = None

    def compose(self) -> ComposeResult:
        with Vertical(id="form-box", classes="form import-form"):
            yield Static("Import a parts sheet (CSV, .xlsx, .ods)", classes="form-title")
            with Horizontal(classes="form-row"):
                yield Label("File", classes="form-label")
                yield TextField(self.path, placeholder="path to the sheet; Enter: preview",
                                id="imp-path", compact=True, classes="form-input")
            yield Checkbox("Skip columns that match no field", id="imp-skip", compact=True)
            with VerticalScroll(id="imp-preview-box"):
                yield Static("", id="imp-preview", markup=False)
            yield Static("", id="form-message", classes="form-error", markup=False)
            with Horizontal(classes="form-buttons"):
                yield Button("Preview", id="preview", compact=True)
                yield Button("Import", id="ok", variant="primary", compact=True, disabled=True)
                yield Button("Cancel", id="cancel", compact=True)

    def on_mount(self) -> None:
        self.query_one("#imp-path", Input).focus()

    def _message(self, text: str) -> None:
        box = self.query_one("#form-message", Static)
        box.update(text)
        box.set_class(bool(text), "shown")

    def _run(self, dry_run: bool) -> SheetReport | None:
        from partsdb.errors import PartsdbError
        from partsdb.services.sheet import SheetOptions, import_sheet

        path = self.query_one("#imp-path", Input).value.strip()
        if not path:
            self._message("file: empty; expected the path of a CSV, .xlsx or .ods sheet")
            return None
        try:
            with self.db.session() as session:
                options = SheetOptions(ignore_unknown=self.query_one("#imp-skip", Checkbox).value)
                report = import_sheet(session, path, options, dry_run=dry_run)
                if dry_run:
                    session.rollback()
        except PartsdbError as err:
            self._message(str(err))
            self.query_one("#imp-preview", Static).update("")
            self.query_one("#ok", Button).disabled = True
            return None
        self._message("")
        return report

    @on(Input.Submitted, "#imp-path")
    @on(Button.Pressed, "#preview")
    def preview(self, event: Any = None) -> None:
        report = self._run(dry_run=True)
        if report is None:
            return
        self.previewed = self.query_one("#imp-path", Input).value.strip()
        self.query_one("#imp-preview", Static).update(describe(report))
        ok = self.query_one("#ok", Button)
        ok.disabled = False
        ok.focus()

    @on(Input.Changed, "#imp-path")
    @on(Checkbox.Changed, "#imp-skip")
    def _path_changed(self) -> None:
        if self.previewed is not None:
            self.query_one("#ok", Button).disabled = True
            self.previewed = None

    @on(Button.Pressed, "#ok")
    def confirm(self) -> None:
        if self.previewed is None:
            return
        report = self._run(dry_run=False)
        if report is not None:
            self.dismiss("imported: " + report.summary())

    @on(Button.Pressed, "#cancel")
    def action_cancel(self) -> None:
        self.dismiss(None)
