"""The Swap log view: recorded substitutions, filtered, with the audit's findings marked.

Filters (original, substitute, job, outcome, days) go to ``swaplog.list_swaps``; the audit
(``swaplog.audit``: each swap re-checked against today's device data) marks the swaps whose
substitute is now under-rated or incompatible with ``!`` and says why under the table. ``o``
opens a small form to set the outcome and note of the highlighted swap
(``swaplog.set_outcome``, one transaction). A bad filter is reported beside the filters.
"""

from __future__ import annotations

from datetime import date, datetime
from typing import TYPE_CHECKING, Any, ClassVar

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, DataTable, Input, Label, Static

from tui.inputs import TextField

if TYPE_CHECKING:
    from partsdb.storage.database import Database

OUTCOME_STYLE = {"worked": "green", "failed": "bold red"}


def parse_date(text: str, field: str) -> date | None:
    """YYYY-MM-DD -> the day; blank -> None; otherwise ValueError naming the field."""
    text = text.strip()
    if not text:
        return None
    try:
        return datetime.strptime(text, "%Y-%m-%d").date()
    except ValueError:
        raise ValueError(f"{field}: {text!r} is not valid; expected a date such as 2026-03-31"
                         ) from None


class OutcomeForm(ModalScreen[str | None]):
    """Set the outcome (worked / failed / unknown) and the note of one swap."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, db: Database, swap: Any) -> None:
        super().__init__()
        self.db = db
        self.swap = swap

    def compose(self) -> ComposeResult:
        s = self.swap
        with Vertical(id="form-box", classes="form outcome-form"):
            yield Static(f"Swap #{s.id}: {s.original} -> {s.substitute} (job {s.job})",
                         classes="form-title")
            with Horizontal(classes="form-row"):
                yield Label("Outcome", classes="form-label")
                yield TextField(s.outcome or "", placeholder="worked / failed / unknown",
                                id="of-outcome", compact=True, classes="form-input")
            yield Static("", id="ofe-outcome", classes="form-error")
            with Horizontal(classes="form-row"):
                yield Label("Note", classes="form-label")
                yield TextField(s.note or "", placeholder="what was seen", id="of-note",
                                compact=True, classes="form-input")
            yield Static("", id="form-message", classes="form-error")
            with Horizontal(classes="form-buttons"):
                yield Button("Save", id="ok", variant="primary", compact=True)
                yield Button("Cancel", id="cancel", compact=True)

    def on_mount(self) -> None:
        self.query_one("#of-outcome", Input).focus()

    @on(Input.Submitted)
    @on(Button.Pressed, "#ok")
    def action_submit(self) -> None:
        from partsdb.errors import PartsdbError
        from partsdb.services import swaplog

        outcome = self.query_one("#of-outcome", Input).value.strip().lower() or "unknown"
        note = self.query_one("#of-note", Input).value
        if outcome not in swaplog.SET_OUTCOMES:
            box = self.query_one("#ofe-outcome", Static)
            box.update(f"outcome: {outcome!r} is not valid; expected worked, failed or unknown")
            box.add_class("shown")
            return
        try:
            with self.db.session() as session:
                view = swaplog.set_outcome(session, self.swap.id, outcome,
                                           note if note != (self.swap.note or "") else None)
        except (PartsdbError, ValueError) as err:
            message = self.query_one("#form-message", Static)
            message.update(f"REFUSED: {err}")
            message.add_class("shown")
            return
        self.dismiss(f"Swap #{view.id}: {view.outcome or 'outcome unknown'}")

    @on(Button.Pressed, "#cancel")
    def action_cancel(self) -> None:
        self.dismiss(None)


class SwapLogView(Vertical):
    """Filter inputs over the swap log; the audit's findings marked."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("o", "outcome", "Set outcome"),
    ]

    def __init__(self, db: Database, **kwargs: Any) -> None:
        super().__init__(**kwargs)
        self.db = db
        self._loaded = False
        self.swaps: list[Any] = []
        self.findings: dict[int, Any] = {}
        """Swap id -> its audit item, for the swaps the audit finds under-rated."""

    def compose(self) -> ComposeResult:
        with Horizontal(id="swaps-filters"):
            yield TextField(placeholder="original", id="sw-original", compact=True)
            yield TextField(placeholder="substitute", id="sw-substitute", compact=True)
            yield TextField(placeholder="job", id="sw-job", compact=True)
            yield TextField(placeholder="outcome", id="sw-outcome", compact=True)
            yield TextField(placeholder="from YYYY-MM-DD", id="sw-since", compact=True)
            yield TextField(placeholder="to YYYY-MM-DD", id="sw-until", compact=True)
        yield Static("", id="swaps-status")
        table: DataTable[Any] = DataTable(id="swaps-table", cursor_type="row", zebra_stripes=True)
        yield table
        yield Static("", id="swaps-detail")

    def on_mount(self) -> None:
        table = self.query_one("#swaps-table", DataTable)
        for label in ("!", "#", "When", "Original", "Substitute", "Job", "Outcome", "Note"):
            table.add_column(label)

    def load(self) -> None:
        self._loaded = True
        self.refresh_swaps()

    def refresh_data(self, visible: bool) -> None:
        if visible and self._loaded:
            self.refresh_swaps()

    @on(Input.Submitted)
    @on(Input.Changed)
    def _filters_changed(self, event: Input.Changed | Input.Submitted) -> None:
        event.stop()
        self.refresh_swaps()

    def refresh_swaps(self) -> None:
        from partsdb.errors import PartsdbError
        from partsdb.services import swaplog
        from partsdb.storage.database import DatabaseError

        def text(ident: str) -> str:
            return self.query_one(ident, Input).value.strip()

        status = self.query_one("#swaps-status", Static)
        try:
            since = parse_date(text("#sw-since"), "from")
            until = parse_date(text("#sw-until"), "to")
            with self.db.session() as session:
                swaps = swaplog.list_swaps(
                    session, text("#sw-original") or None,
                    substitute=text("#sw-substitute") or None, job=text("#sw-job") or None,
                    outcome=text("#sw-outcome").lower() or None, since=since, until=until)
                findings = {item.swap.id: item for item in swaplog.audit(session)
                            if item.under_rated}
        except (ValueError, PartsdbError, DatabaseError) as err:
            status.update(Text("FILTER: " + str(err), style="bold yellow"))
            return
        self.swaps, self.findings = swaps, findings
        table = self.query_one("#swaps-table", DataTable)
        table.clear()
        for s in swaps:
            flagged = s.id in findings
            table.add_row(Text("!" if flagged else "", style="bold red"), str(s.id),
                          s.at.strftime("%Y-%m-%d"), s.original, s.substitute, s.job,
                          Text(s.outcome or "—", style=OUTCOME_STYLE.get(s.outcome or "", "")),
                          s.note or "")
        marked = sum(1 for s in swaps if s.id in findings)
        status.update(f"{len(swaps)} swap" + ("" if len(swaps) == 1 else "s")
                      + (f", {marked} marked ! by the audit (data changed since)" if marked
                         else "") + "   o: set outcome")
        self._show_detail(0)

    @on(DataTable.RowHighlighted, "#swaps-table")
    def _row_highlighted(self, event: DataTable.RowHighlighted) -> None:
        self._show_detail(event.cursor_row)

    def _show_detail(self, row: int) -> None:
        detail = self.query_one("#swaps-detail", Static)
        if not 0 <= row < len(self.swaps):
            detail.update("")
            return
        s = self.swaps[row]
        line = Text.assemble((f"#{s.id} ", "bold"), (s.original, "bold"), " -> ",
                             (s.substitute, "bold"), f", job {s.job}",
                             f": {s.note}" if s.note else "")
        item = self.findings.get(s.id)
        if item is not None:
            line.append(f"\n! audit ({item.policy}): {item.verdict}: "
                        + ("; ".join(item.problems) or "re-check"), style="bold red")
        detail.update(line)

    def selected(self) -> Any | None:
        table = self.query_one("#swaps-table", DataTable)
        row = table.cursor_row
        return self.swaps[row] if 0 <= row < len(self.swaps) else None

    def action_outcome(self) -> None:
        swap = self.selected()
        if swap is None:
            self.app.notify("No swap selected.", timeout=2)
            return

        def done(result: str | None) -> None:
            if result:
                self.refresh_swaps()
                absorb = getattr(self.app, "absorb_own_change", None)
                if absorb is not None:
                    absorb()
                self.app.notify(result, timeout=3)

        self.app.push_screen(OutcomeForm(self.db, swap), done)
