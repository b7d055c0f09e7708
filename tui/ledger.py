"""The Ledger view: stock movements, newest first, filtered by device, place, job and date.

Filters are applied by ``stock.ledger`` in the database; a bad filter (unknown device, a date
that is not YYYY-MM-DD, a malformed place) is reported beside the filters, never raised. The
highlighted movement is spelled out under the table, note and all (a narrow terminal cuts the
table's last columns).
"""

from __future__ import annotations

from datetime import datetime, timedelta
from typing import TYPE_CHECKING, Any

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.containers import Horizontal, Vertical
from textual.widgets import DataTable, Input, Static

from partsdb.clock import show, to_local
from tui.inputs import TextField

if TYPE_CHECKING:
    from partsdb.storage.database import Database

LIMIT = 1000
REASON_STYLE = {"receive": "green", "take": "yellow", "return": "cyan", "move": "blue",
                "count": "magenta"}


def parse_day(text: str, field: str, end: bool = False) -> datetime | None:
    """YYYY-MM-DD (a local day) -> its start (or end when ``end``) in UTC; blank -> None."""
    text = text.strip()
    if not text:
        return None
    try:
        day = datetime.strptime(text, "%Y-%m-%d")
    except ValueError:
        raise ValueError(f"{field}: {text!r} is not valid; expected a date such as 2024-03-31"
                         ) from None
    from partsdb.clock import local_to_utc

    return local_to_utc(day + timedelta(days=1) - timedelta(microseconds=1) if end else day)


class LedgerView(Vertical):
    """Filter inputs over a table of movements."""

    def __init__(self, db: Database, **kwargs: Any) -> None:
        super().__init__(**kwargs)
        self.db = db
        self._loaded = False
        self._entries: list[Any] = []

    def compose(self) -> ComposeResult:
        with Horizontal(id="ledger-filters"):
            yield TextField(placeholder="device", id="lg-device", compact=True)
            yield TextField(placeholder="place", id="lg-place", compact=True)
            yield TextField(placeholder="job (starts)", id="lg-job", compact=True)
            yield TextField(placeholder="from YYYY-MM-DD", id="lg-since", compact=True)
            yield TextField(placeholder="to YYYY-MM-DD", id="lg-until", compact=True)
        yield Static("", id="ledger-status")
        table: DataTable[Any] = DataTable(id="ledger-table", cursor_type="row", zebra_stripes=True)
        yield table
        yield Static("", id="ledger-detail")

    def on_mount(self) -> None:
        table = self.query_one("#ledger-table", DataTable)
        from partsdb.clock import zone_name

        # Local time, the zone named in the heading; the ledger stores UTC.
        for label in (f"When ({zone_name()})", "Device", "Place", "Cond.", "Change", "Reason",
                      "Job", "Note"):
            table.add_column(label)

    def load(self) -> None:
        if not self._loaded:
            self._loaded = True
        self.refresh_entries()

    def refresh_data(self, visible: bool) -> None:
        """The database changed: re-read the movements now if shown (load() re-reads anyway)."""
        if visible and self._loaded:
            table = self.query_one("#ledger-table", DataTable)
            row = table.cursor_row
            self.refresh_entries()
            if self._entries:
                table.move_cursor(row=min(row, len(self._entries) - 1))

    @on(Input.Submitted)
    @on(Input.Changed)
    def _filters_changed(self, event: Input.Changed | Input.Submitted) -> None:
        event.stop()
        self.refresh_entries()

    def refresh_entries(self) -> None:
        from partsdb.services import stock
        from partsdb.storage.database import DatabaseError

        def text(ident: str) -> str:
            return self.query_one(ident, Input).value.strip()

        status = self.query_one("#ledger-status", Static)
        try:
            since = parse_day(text("#lg-since"), "from")
            until = parse_day(text("#lg-until"), "to", end=True)
            with self.db.session() as session:
                entries = stock.ledger(session, text("#lg-device") or None,
                                       text("#lg-place") or None, text("#lg-job") or None,
                                       since, until, limit=LIMIT)
        except (ValueError, LookupError, DatabaseError) as err:
            message = str(err.args[0]) if isinstance(err, KeyError) and err.args else str(err)
            status.update(Text("FILTER: " + message, style="bold yellow"))
            return
        table = self.query_one("#ledger-table", DataTable)
        table.clear()
        self._entries = entries
        self._show_detail(0)
        for e in entries:
            change = Text(f"{e.change:+d}", style="green" if e.change > 0 else "red",
                          justify="right")
            table.add_row(to_local(e.at).strftime("%Y-%m-%d %H:%M"), e.designation, e.location,
                          e.condition, change, Text(e.reason, style=REASON_STYLE.get(e.reason, "")),
                          e.job or "", e.note or "")
        more = " (newest shown; narrow the filters)" if len(entries) == LIMIT else ""
        status.update(f"{len(entries)} movement" + ("" if len(entries) == 1 else "s") + more)

    @on(DataTable.RowHighlighted, "#ledger-table")
    def _row_highlighted(self, event: DataTable.RowHighlighted) -> None:
        self._show_detail(event.cursor_row)

    def _show_detail(self, row: int) -> None:
        detail = self.query_one("#ledger-detail", Static)
        if not 0 <= row < len(self._entries):
            detail.update("")
            return
        e = self._entries[row]
        line = Text.assemble(
            (show(e.at), "bold"), "  ", (e.designation, "bold"),
            f" {e.change:+d} ", (e.reason, REASON_STYLE.get(e.reason, "")),
            f" at {e.location} ({e.condition})", f", job {e.job}" if e.job else "",
            ": " + e.note if e.note else "")
        detail.update(line)
