"""The Jobs view: a unit's repair kit, planned, adjusted line by line, taken and printed.

A kit file (CSV, as ``partsdb kit FILE`` reads it) is opened by its path; the view shows each
line's action (stock, substitute, buy), the part fitted and its verdict, and the pick list by
drawer. ``c`` lists the highlighted line's parts (its original and ranked candidates, with what
the drawers still hold once the other lines have theirs) and switches the line to the one
chosen; ``t`` takes the whole kit for a job reference (one transaction, swaps logged); ``s``
writes the kit sheet (.pdf or .md) and shows its absolute path. The kit service
(:mod:`partsdb.services.kit`, :mod:`partsdb.services.kitsheet`) does all of it; the view only
shows and asks.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any, ClassVar

from rich.console import Group
from rich.table import Table
from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import DataTable, Static

from partsdb.errors import PartsdbError
from tui.inputs import TextField
from tui.substitute import STATUS_STYLE, PromptForm

if TYPE_CHECKING:
    from partsdb.services.kit import KitPlan, LineOption
    from partsdb.storage.database import Database

ACTION_STYLE = {"stock": "green", "substitute": "cyan", "buy": "bold yellow"}


class LinePicker(ModalScreen[Any]):
    """The parts one kit line may use; Enter switches the line to the highlighted one (the
    service counts the drawers again). Dismisses with the new plan, or None."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, db: Database, plan: KitPlan, index: int,
                 options: list[LineOption]) -> None:
        super().__init__()
        self.db = db
        self.plan = plan
        self.index = index
        self.options = options

    def compose(self) -> ComposeResult:
        line = self.plan.lines[self.index].line
        with Vertical(id="form-box", classes="form line-picker"):
            yield Static(f"{line.reference}: {line.designation} x{line.quantity} — fit which "
                         "part?", classes="form-title")
            yield Static("Left: what the drawers hold once the other lines have theirs.",
                         classes="form-hint")
            table: DataTable[Any] = DataTable(id="lp-table", cursor_type="row")
            yield table
            yield Static("", id="form-message")

    def on_mount(self) -> None:
        table = self.query_one("#lp-table", DataTable)
        for label in ("Part", "Verdict", "Score", "Left", ""):
            table.add_column(label)
        for o in self.options:
            verdict = Text(o.verdict or "original",
                           style=STATUS_STYLE.get(o.verdict or "", "bold"))
            left = Text(f"{o.left}/{o.needed}", style="green" if o.enough else "yellow")
            table.add_row(o.designation, verdict,
                          "" if o.score is None else f"{o.score:.0f}", left,
                          "now" if o.current else "")
        now = next((i for i, o in enumerate(self.options) if o.current), 0)
        table.move_cursor(row=now)
        table.focus()

    @on(DataTable.RowSelected, "#lp-table")
    def _chosen(self, event: DataTable.RowSelected) -> None:
        from partsdb.services import kit

        option = self.options[event.cursor_row]
        try:
            plan = kit.switch_line(self.db, self.plan, self.index, option.designation)
        except PartsdbError as err:
            self.query_one("#form-message", Static).update(f"NOT SWITCHED: {err}")
            return
        self.dismiss(plan)

    def action_cancel(self) -> None:
        self.dismiss(None)


class JobsView(Vertical):
    """A kit file's lines and pick list; switch a line, take the kit, write its sheet."""

    DEFAULT_CSS = """
    JobsView { height: 1fr; }
    #jb-file { width: 1fr; height: 1; }
    #jb-status { height: auto; }
    #jb-lines { height: 1fr; }
    #jb-picks-box { height: auto; max-height: 8; border-top: solid $panel-lighten-2; }
    #jb-caution { height: auto; color: $error; }
    .line-picker { height: auto; max-height: 20; }
    #lp-table { height: auto; max-height: 12; }
    """

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("c", "switch", "Switch part"),
        Binding("t", "take", "Take kit"),
        Binding("s", "sheet", "Kit sheet"),
        Binding("down", "focus_lines", "Lines", show=False),
    ]

    def __init__(self, db: Database, **kwargs: Any) -> None:
        super().__init__(**kwargs)
        self.db = db
        self.path: Path | None = None
        self.plan: KitPlan | None = None
        self.taken: str | None = None
        """The job the shown plan was taken for (a plan is taken once; open the file again
        to plan anew from what the drawers now hold)."""
        self.written: Path | None = None
        """The last kit sheet written (absolute)."""

    def compose(self) -> ComposeResult:
        # The app focuses whichever widget has the class jb-focus when F8 shows the view: the
        # file field until a kit is open, then the lines (so c, t and s act at once).
        yield TextField(placeholder="kit file (CSV: reference, designation, quantity, ...), "
                        "Enter", id="jb-file", compact=True, classes="jb-focus")
        yield Static("Open a kit file: one line per transistor of the unit "
                     "(see partsdb kit --help).", id="jb-status")
        table: DataTable[Any] = DataTable(id="jb-lines", cursor_type="row", zebra_stripes=True)
        yield table
        with VerticalScroll(id="jb-picks-box"):
            yield Static("", id="jb-picks")
        yield Static(Text("CAUTION ", style="bold") + Text(_short_caution()), id="jb-caution")

    def on_mount(self) -> None:
        table = self.query_one("#jb-lines", DataTable)
        for label in ("Ref.", "Designation", "Qty", "Action", "Part", "Verdict", "From"):
            table.add_column(label)

    def load(self) -> None:
        """Nothing to read until a kit file is opened."""

    def refresh_data(self, visible: bool) -> None:
        """A plan not yet taken is planned again from the file (the drawers may have
        changed); a switched line goes back to the service's choice."""
        if visible and self.path is not None and self.taken is None:
            self.open_kit(str(self.path))

    def action_focus_lines(self) -> None:
        self.query_one("#jb-lines", DataTable).focus()

    def _status(self, text: str | Text) -> None:
        self.query_one("#jb-status", Static).update(text)

    # ------------------------------------------------------------------ opening

    @on(TextField.Submitted, "#jb-file")
    def _submitted(self, event: TextField.Submitted) -> None:
        self.open_kit(event.value)

    def open_kit(self, text: str) -> None:
        from partsdb.services import kit

        text = text.strip()
        if not text:
            self._status(Text("NOT OPENED: kit file: empty; expected the path of a CSV file",
                              style="bold yellow"))
            return
        path = Path(text).expanduser()
        try:
            plan = kit.plan_kit(self.db, kit.read_kit(path))
        except PartsdbError as err:
            self._status(Text(f"NOT OPENED: {err}", style="bold yellow"))
            return
        self.path, self.plan, self.taken = path.resolve(), plan, None
        self._show_plan()
        lines = self.query_one("#jb-lines", DataTable)
        self.query_one("#jb-file").remove_class("jb-focus")
        lines.add_class("jb-focus")
        lines.focus()

    def _show_plan(self, row: int = 0) -> None:
        plan = self.plan
        if plan is None:
            return
        table = self.query_one("#jb-lines", DataTable)
        table.clear()
        for p in plan.lines:
            merged: dict[str, int] = {}
            for location, _condition, qty in p.picks:
                merged[location] = merged.get(location, 0) + qty
            table.add_row(p.line.reference, p.line.designation, str(p.line.quantity),
                          Text(p.action, style=ACTION_STYLE.get(p.action, "")), p.part,
                          Text(p.verdict or "—", style=STATUS_STYLE.get(p.verdict or "", "")),
                          ", ".join(f"{loc} x{q}" for loc, q in merged.items()) or "—")
        table.move_cursor(row=min(row, len(plan.lines) - 1))
        from partsdb.services.kitsheet import make_kit_sheet

        sheet = make_kit_sheet(plan)
        picks = Table(box=None, padding=(0, 1), header_style="bold", expand=False)
        for label in ("Drawer", "Part", "Qty", "For"):
            picks.add_column(label)
        for pick in sheet.picks:
            picks.add_row(*sheet.pick_cells(pick)[:4])
        shown: list[Any] = [Text("Pick list (by drawer)", style="bold"), picks]
        if sheet.to_buy:
            shown.append(Text(sheet.buy_text(), style="yellow"))
        self.query_one("#jb-picks", Static).update(Group(*shown))
        parts = sum(q for _l, _p, q in plan.pick_list())
        name = self.path.name if self.path is not None else "kit"
        line = Text(f"{name}: {len(plan.lines)} lines, {parts} parts to pick")
        if plan.short:
            line.append(f", {len(plan.short)} to buy", style="bold yellow")
        if self.taken:
            line.append(f"; TAKEN for job {self.taken}", style="bold green")
        line.append("   c switch  t take  s sheet", style="dim")
        self._status(line)

    def _row(self) -> int:
        return self.query_one("#jb-lines", DataTable).cursor_row

    # ------------------------------------------------------------------ actions

    def action_switch(self) -> None:
        from partsdb.services import kit

        if self.plan is None:
            self.notify("Open a kit file first.", severity="warning")
            return
        if self.taken:
            self.notify(f"This kit was taken for job {self.taken}: open the file again to "
                        "plan anew.", severity="warning")
            return
        row = self._row()
        try:
            options = kit.line_options(self.db, self.plan, row)
        except PartsdbError as err:
            self._status(Text(f"NOT SWITCHED: {err}", style="bold yellow"))
            return

        def done(plan: Any) -> None:
            if plan is not None:
                self.plan = plan
                self._show_plan(row)
                p = plan.lines[row]
                self.notify(f"{p.line.reference}: {p.part} ({p.action}).", timeout=3)

        self.app.push_screen(LinePicker(self.db, self.plan, row, options), done)

    def action_take(self) -> None:
        from partsdb.services import kit

        plan = self.plan
        if plan is None:
            self.notify("Open a kit file first.", severity="warning")
            return
        if self.taken:
            self.notify(f"Already taken for job {self.taken}.", severity="warning")
            return
        if self.db.read_only:
            self.notify("This database is open read-only (--read-only): nothing can be "
                        "taken.", severity="warning")
            return
        count: list[int] = []

        def check(values: dict[str, str]) -> str:
            if not values["job"]:
                return "job: empty; expected the repair's job reference (such as J-2611)"
            count.append(kit.take_kit(self.db, plan, values["job"]))
            return ""

        def done(values: dict[str, str] | None) -> None:
            if values is None or not count:
                return
            self.taken = values["job"]
            absorb = getattr(self.app, "absorb_own_change", None)
            if absorb is not None:
                absorb()
            self._show_plan(self._row())
            swaps = sum(1 for p in plan.lines if p.action == "substitute")
            self.notify(f"Took {count[0]} parts for job {self.taken}; {swaps} swaps logged.")

        parts = sum(q for _l, _p, q in plan.pick_list())
        self.app.push_screen(PromptForm(f"Take the whole kit ({parts} parts; all or nothing)",
                                        [("job", "Job ref.", "")], check), done)

    def action_sheet(self) -> None:
        if self.plan is None:
            self.notify("Open a kit file first.", severity="warning")
            return
        plan = self.plan
        default = f"kit-{self.taken}.pdf" if self.taken else "kit.pdf"

        def check(values: dict[str, str]) -> str:
            from partsdb.services import kitsheet
            from partsdb.services.files import protected_files

            sheet = kitsheet.make_kit_sheet(plan, job=values["job"] or None)
            self.written = kitsheet.write_kit_sheet(sheet, Path(values["file"] or default),
                                                    protect=protected_files(self.db))
            return ""

        def done(values: dict[str, str] | None) -> None:
            if values is not None and self.written is not None:
                self._status(Text(f"Kit sheet written to {self.written}", style="green"))
                self.notify(f"Kit sheet written to {self.written}")

        self.written = None
        self.app.push_screen(PromptForm("Write the kit sheet (.pdf or .md)",
                                        [("job", "Job ref.", self.taken or ""),
                                         ("file", "File", default)], check), done)


def _short_caution() -> str:
    from partsdb.cautions import SHORT_CAUTION

    return SHORT_CAUTION.removeprefix("Caution: ")
