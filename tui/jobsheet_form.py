"""A small form that writes the job sheet of one original and the substitute chosen for it.

Opened from the stage calculator (with the stage as solved there) and from the Substitute view
(with the circuit stress and policy the candidates were ranked under, no stage). The job sheet
comes from :mod:`partsdb.services.jobsheet` (the same service as ``partsdb substitute
--pick``); the file goes through the
one file writer (an existing file is refused; the format follows the name: .pdf, .html, .md).
The absolute path written is shown.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any, ClassVar

from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, Static

from tui.inputs import TextField

if TYPE_CHECKING:
    from partsdb.storage.database import Database


class JobSheetForm(ModalScreen[str | None]):
    """Job reference and file name; dismisses with the path written, or None."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, db: Database, original: str, substitute: str, stage: Any = None, *,
                 stress: Any = None, policy: str | None = None) -> None:
        super().__init__()
        self.db = db
        self.original = original
        self.substitute = substitute
        self.stage = stage
        """A :class:`partsdb.services.jobsheet.StageSpec` (the calculator's stage), or None."""
        self.stress = stress
        """The circuit stress the pair is judged under (None: the original's ratings)."""
        self.policy = policy

    def compose(self) -> ComposeResult:
        with Vertical(id="form-box", classes="form jobsheet-form"):
            yield Static(f"Job sheet: {self.original} -> {self.substitute}",
                         classes="form-title")
            for ident, label, hint in (("job", "Job ref.", "e.g. J-2611"),
                                       ("file", "File", "job.pdf (.pdf, .html or .md)")):
                with Horizontal(classes="form-row"):
                    yield Label(label, classes="form-label")
                    yield TextField("", placeholder=hint, id=f"js-{ident}", compact=True,
                                    classes="form-input")
            yield Static("", id="form-message", classes="form-error")
            with Horizontal(classes="form-buttons"):
                yield Button("Write", id="ok", variant="primary", compact=True)
                yield Button("Cancel", id="cancel", compact=True)

    def on_mount(self) -> None:
        self.query_one("#js-job", Input).focus()

    @on(Input.Submitted)
    @on(Button.Pressed, "#ok")
    def action_submit(self) -> None:
        from partsdb.errors import PartsdbError
        from partsdb.services import jobsheet
        from partsdb.services.files import protected_files

        job = self.query_one("#js-job", Input).value.strip()
        name = self.query_one("#js-file", Input).value.strip() or f"job-{job}.pdf"
        message = self.query_one("#form-message", Static)
        try:
            sheet = jobsheet.make_job_sheet(self.db, self.original, self.substitute, job=job,
                                            stage=self.stage, stress=self.stress,
                                            policy=self.policy)
            written = jobsheet.write_job_sheet(sheet, Path(name),
                                               protect=protected_files(self.db))
        except (PartsdbError, ValueError) as err:
            message.update(f"NOT WRITTEN: {err}")
            message.add_class("shown")
            return
        self.dismiss(str(written))

    @on(Button.Pressed, "#cancel")
    def action_cancel(self) -> None:
        self.dismiss(None)
