"""The Substitute view: rank the catalog as substitutes for an original, and act on the choice.

The original is chosen by (fuzzy) designation, optionally with a spec override line and the
circuit stress and policy; the ranking itself is done by ``partsdb.services.substitution``.
The selected candidate is shown beside the requirement parameter by parameter, each ratio as
a small bar with its status word, its flags, the lead drawing when the lead order differs, and
the safety caution, always. Actions: take one from its drawer, record the swap, write the job
sheet of the pair, save the report, open the pair in the Stage view.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, ClassVar

from rich.console import Group
from rich.table import Table
from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Button, DataTable, Label, Select, Static

from partsdb.errors import PartsdbError
from partsdb.ranking import LABEL
from partsdb.services import substitution
from partsdb.spec_fields import STRESS_FIELDS, stresses_for
from tui.inputs import TextField
from tui.stock_forms import StockForm, StockRequest
from tui.wording import in_labels

if TYPE_CHECKING:
    from partsdb.storage.database import Database

STATUS_STYLE = {"ok": "green", "suitable": "green", "marginal": "yellow",
                "unverified": "magenta", "under-rated": "bold red", "incompatible": "red",
                "unknown": "dim", "flag": "yellow"}
RANK_LIMIT = 30


SEVERITY: dict[str, int] = {"under-rated": 0, "marginal": 1, "unknown": 2, "ok": 3}
"""Order of the comparison's rows in the detail pane: what decides the verdict first."""


def ratio_bar(ratio: float | None, width: int = 10) -> Text:
    """A bar whose midpoint mark is ratio 1.0 (just meets the need); full at 2x or more."""
    if ratio is None:
        return Text("?".center(width), style="dim")
    filled = max(0, min(width, round(ratio / 2 * width)))
    style = "green" if ratio >= 1.2 else "yellow" if ratio >= 1.0 else "red"
    text = Text()
    for i in range(width):
        if i < filled:
            text.append("█", style=style)
        elif i == width // 2:
            text.append("│", style="dim")
        else:
            text.append("░", style="dim")
    return text


def lead_drawing(original: str, substitute: str, names: tuple[str, str]) -> Text:
    """Both parts seen from the flat side, leads down, and which lead goes to which pad."""
    out = Text()
    width = 18
    out.append(names[0][:width].ljust(width + 2) + names[1][:width] + "\n", style="bold")
    out.append(" ┌─────┐".ljust(width + 2) + " ┌─────┐\n")
    out.append(" └┬─┬─┬┘".ljust(width + 2) + " └┬─┬─┬┘\n")
    out.append(("  " + " ".join(original)).ljust(width + 2) + "  " + " ".join(substitute) + "\n",
               style="cyan")
    pads = []
    for pad, function in enumerate(original, start=1):
        lead = substitute.index(function) + 1
        pads.append(f"pad {pad} {function} ← lead {lead}" + ("" if lead == pad else " (cross)"))
    out.append("  " + "; ".join(pads), style="yellow")
    return out


class PromptForm(ModalScreen[dict[str, str] | None]):
    """A small form of text fields; dismisses with their values, or None when cancelled."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, title: str, fields: list[tuple[str, str, str]],
                 check: Any = None) -> None:
        super().__init__()
        self.title_text = title
        self.fields = fields
        self.check = check

    def compose(self) -> ComposeResult:
        with Vertical(id="form-box", classes="form"):
            yield Static(self.title_text, classes="form-title")
            for ident, label, value in self.fields:
                with Horizontal(classes="form-row"):
                    yield Label(label, classes="form-label")
                    yield TextField(value, id=f"pf-{ident}", compact=True, classes="form-input")
            yield Static("", id="form-message", classes="form-error")
            with Horizontal(classes="form-buttons"):
                yield Button("OK", id="ok", variant="primary", compact=True)
                yield Button("Cancel", id="cancel", compact=True)

    @on(TextField.Submitted)
    @on(Button.Pressed, "#ok")
    def _ok(self) -> None:
        values = {ident: self.query_one(f"#pf-{ident}", TextField).value.strip()
                  for ident, _, _ in self.fields}
        if self.check is not None:
            try:
                message = self.check(values)
            except (ValueError, LookupError, OSError, PartsdbError) as err:
                from partsdb.storage.database import mask_url

                message = f"REFUSED: {mask_url(str(err))}"
            if message:
                self.query_one("#form-message", Static).update(message)
                return
        self.dismiss(values)

    @on(Button.Pressed, "#cancel")
    def action_cancel(self) -> None:
        self.dismiss(None)


class SubstituteView(Vertical):
    """Original and stress on top; ranked candidates beside the selected one's comparison."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("t", "take_one", "Take one"),
        Binding("w", "record_swap", "Log swap"),
        Binding("j", "job_sheet", "Job sheet"),
        Binding("o", "save_report", "Report"),
        Binding("b", "to_stage", "Stage"),
        Binding("down", "focus_list", "List", show=False),
    ]

    def __init__(self, db: Database, **kwargs: Any) -> None:
        super().__init__(**kwargs)
        self.db = db
        self.result: Any = None
        self.original: str | None = None

    def compose(self) -> ComposeResult:
        from partsdb.services.config import available_policies

        try:
            policies = list(available_policies())
        except ValueError as err:  # a broken config file: the built-ins still work
            from partsdb.derating import BUILTIN_POLICIES

            policies = list(BUILTIN_POLICIES)
            self.notify(str(err), severity="warning")
        with Horizontal(id="sub-top"):
            yield TextField(placeholder="original designation (fuzzy), Enter", id="sub-query",
                            compact=True)
            # An example, not a value: "e.g." and italics say so (the field starts empty).
            yield TextField(placeholder="optional spec, e.g. Vceo=60V Icmax=1A", id="sub-spec",
                            compact=True)
        with Horizontal(id="sub-stress"):
            for row in STRESS_FIELDS:  # every stress the CLI offers, from the one table
                # name and unit, or the name alone where both would not fit 80 columns (eight
                # FET inputs leave seven characters each; the tooltip names the unit)
                hint = f"{row.brief} {row.unit}"
                field = TextField(placeholder=hint if len(hint) <= 7 else row.brief,
                                  id=f"ss-{row.name}", compact=True)
                field.tooltip = f"{row.label}: {row.help}"
                # bipolar stresses until a field-effect original is ranked (_show_stresses_for)
                field.display = row in stresses_for("bjt")
                yield field
            yield Select([(name, name) for name in policies], prompt="policy",
                         id="sub-policy", compact=True)
        yield Static("", id="sub-status")
        with Horizontal(id="sub-body"):
            table: DataTable[Any] = DataTable(id="sub-table", cursor_type="row")
            yield table
            with VerticalScroll(id="sub-detail-box"):
                yield Static("", id="sub-detail")
        yield Static(Text("CAUTION ", style="bold") + Text(_short_caution()), id="sub-caution")

    def on_mount(self) -> None:
        table = self.query_one("#sub-table", DataTable)
        for label in ("Substitute", "Score", "Verdict", "Known", "Stock"):
            table.add_column(label)

    def load(self) -> None:
        """Nothing to read until an original is given."""

    def action_focus_list(self) -> None:
        self.query_one("#sub-table", DataTable).focus()

    def _status(self, text: str | Text) -> None:
        self.query_one("#sub-status", Static).update(text)

    # ------------------------------------------------------------------ ranking

    def search_for(self, designation: str) -> None:
        self.query_one("#sub-query", TextField).value = designation
        self.run_search()

    @on(TextField.Submitted, "#sub-query, #sub-spec, #sub-stress Input")
    def _submitted(self) -> None:
        self.run_search()

    @on(Select.Changed, "#sub-policy")
    def _policy_changed(self) -> None:
        if self.original or self.query_one("#sub-spec", TextField).value.strip():
            self.run_search()

    def run_search(self) -> None:
        try:
            self.result, self.original, note = self._rank()
        except (ValueError, LookupError) as err:
            message = str(err.args[0]) if isinstance(err, KeyError) and err.args else str(err)
            self._status(Text("NOT RANKED: " + in_labels(message), style="bold yellow"))
            return
        self._show_result(note)

    def _stress(self) -> Any:
        """The circuit stress typed in the stress row (each blank: not given)."""
        return substitution.parse_stress(
            {row.name: self.query_one(f"#ss-{row.name}", TextField).value
             for row in STRESS_FIELDS})

    def _policy(self) -> str | None:
        policy = self.query_one("#sub-policy", Select).value
        return None if policy is Select.NULL else str(policy)

    def _index(self) -> Any:
        """The app's shared search index; built here (blocking) if it is not ready yet."""
        shared = getattr(self.app, "catalog_index", None)
        if shared is None:  # the view outside PartsdbApp
            from partsdb.search import SearchIndex
            from tui.catalog_data import read_search_corpus

            return SearchIndex(*read_search_corpus(self.db))
        return shared.index or shared.build()

    def _rank(self) -> tuple[Any, str | None, str]:
        query = self.query_one("#sub-query", TextField).value.strip()
        spec = substitution.parse_spec(self.query_one("#sub-spec", TextField).value)
        if not query and not spec:
            raise ValueError("original: empty; type a designation, or a spec such as "
                             "Polarity=npn Vceo=60V Icmax=1A")
        with self.db.session() as session:
            original, note = (substitution.resolve_original(session, query, self._index)
                              if query else (None, ""))
            # another family's stresses (left from the last original) are cleared, not sent
            self._show_stresses_for(substitution.original_kind(session, original)
                                    or spec.get("kind") or "bjt")
            stress = self._stress()
            result = substitution.rank_substitutes(session, original, spec or None, stress,
                                                   self._policy(), limit=RANK_LIMIT)
        return result, original, note

    def _show_stresses_for(self, kind: str) -> None:
        """Show the stress inputs that concern an original of ``kind`` (the others are hidden
        and cleared, so a hidden value never reaches a ranking)."""
        shown = stresses_for(kind)
        for row in STRESS_FIELDS:
            field = self.query_one(f"#ss-{row.name}", TextField)
            field.display = row in shown
            if row not in shown:
                field.value = ""

    def _show_result(self, note: str) -> None:
        result = self.result
        self._show_stresses_for(result.requirement.kind)
        table = self.query_one("#sub-table", DataTable)
        table.clear()
        for c in result.candidates:
            stock = Text(str(c.in_stock), style="green") if c.in_stock else Text("0", style="dim")
            known = Text(f"{c.confidence:.0%}",
                         style="" if c.confidence >= result.policy.min_confidence else "yellow")
            table.add_row(c.designation, f"{c.score:.0f}",
                          Text(c.verdict, style=STATUS_STYLE.get(c.verdict, "")), known, stock)
        who = self.original or "the spec"
        line = Text(f"{len(result.candidates)} of {result.compatible} compatible for {who} "
                    f"(policy {result.policy.name}); verdict first, then score")
        if note:
            line.append("  " + note, style="cyan")
        self._status(line)
        if result.candidates:
            table.move_cursor(row=0)
            self._show_candidate(0)
            table.focus()
        else:
            self.query_one("#sub-detail", Static).update("No compatible part in the catalog.")

    @on(DataTable.RowHighlighted, "#sub-table")
    def _row(self, event: DataTable.RowHighlighted) -> None:
        self._show_candidate(event.cursor_row)

    def selected(self) -> Any | None:
        if self.result is None or not self.result.candidates:
            return None
        row = self.query_one("#sub-table", DataTable).cursor_row
        return self.result.candidates[row] if 0 <= row < len(self.result.candidates) else None

    def _show_candidate(self, row: int) -> None:
        if self.result is None or not 0 <= row < len(self.result.candidates):
            return
        c = self.result.candidates[row]
        req = self.result.requirement

        grid = Table(box=None, padding=(0, 1), header_style="bold", expand=False)
        grid.add_column("Parameter")
        grid.add_column("Need", justify="right")
        grid.add_column(c.designation, justify="right")
        grid.add_column("Ratio")
        grid.add_column("Status")
        # the reasons first: under-rated, marginal and unknown rows above the ok ones, so the
        # why of a verdict is in sight at 80x24 (each group in the checks' own order)
        for check in sorted(c.checks, key=lambda k: SEVERITY.get(k.status, len(SEVERITY))):
            need, offered = c.shown.get(check.parameter, ("—", "—"))
            grid.add_row(LABEL.get(check.parameter, check.parameter), need, offered, ratio_bar(check.ratio),
                         Text(check.status, style=STATUS_STYLE.get(check.status, "")))
        head = Text(f"{c.designation}: ", style="bold")
        head.append(c.verdict, style=STATUS_STYLE.get(c.verdict, ""))
        head.append(f"  score {c.score:.0f}  confidence {c.confidence:.0%}  ")
        head.append(f"stock {c.in_stock}" + (f" in {', '.join(c.locations[:3])}"
                                             if c.locations else ""))
        gains, losses = c.gains_and_losses()
        why = Text("score: ", style="bold")
        why.append(" ".join(f"+{p:.0f} {LABEL.get(n, n)}" for n, p in gains), style="green")
        if losses:
            why.append("  ")
            why.append(" ".join(f"-{p:.0f} {LABEL.get(n, n)}" for n, p in losses), style="red")
        parts: list[Any] = [head, why, grid]
        parts += [problem_text(p) for p in c.problems()]
        sub_pin = (c.device or {}).get("pinout")
        if req.pinout and sub_pin and sub_pin != req.pinout:
            parts.append(lead_drawing(req.pinout, sub_pin, (req.designation or "original",
                                                             c.designation)))
        for text in self.result.notes:
            parts.append(Text("· " + text, style="dim"))
        self.query_one("#sub-detail", Static).update(Group(*parts))

    # ------------------------------------------------------------------ actions

    def action_take_one(self) -> None:
        c = self.selected()
        if c is None:
            self.notify("Rank substitutes first, then select one.", severity="warning")
            return
        if not c.in_stock or not c.locations:
            self.notify(f"{c.designation} is not in the drawers.", severity="warning")
            return
        request = StockRequest("take", c.designation, c.locations[0], "")
        form = StockForm(self.db, request)
        self.app.push_screen(form, self._after_take)
        form.call_after_refresh(self._prefill_one, form)

    def _prefill_one(self, form: StockForm) -> None:
        form.query_one("#sf-quantity", TextField).value = "1"
        if form.job_required:  # the shop's config asks for the job: the cursor waits there
            form.query_one("#sf-job", TextField).focus()

    def _after_take(self, result: str | None) -> None:
        if result is None:
            return
        self.notify(result)
        self._status(Text(result, style="green"))
        self.run_search()  # stock changed: show the new counts

    def action_record_swap(self) -> None:
        c = self.selected()
        if c is None or self.original is None:
            self.notify("Rank substitutes for a stored original first.", severity="warning")
            return
        if self.db.read_only:
            self.notify("This database is open read-only (--read-only): the swap log cannot "
                        "be changed.", severity="warning")
            self._status(Text("Read-only: the swap was not recorded.", style="yellow"))
            return

        def check(values: dict[str, str]) -> str:
            if not values["job"]:
                return "job: empty; expected the repair's job reference"
            from partsdb.services import swaplog

            with self.db.session() as session:
                swaplog.add(session, self.original, c.designation, values["job"],
                            self.result.stress, policy=self.result.policy.name,
                            note=values["note"] or None)
            return ""

        self.app.push_screen(PromptForm(f"Record the swap {self.original} -> {c.designation}",
                                        [("job", "Job ref.", ""), ("note", "Note", "")], check),
                             lambda v: v and self.notify("Swap recorded in the swap log."))

    def action_job_sheet(self) -> None:
        """The job sheet of the original and the selected candidate, judged under the stress
        and policy they were ranked with; the absolute path written is shown."""
        from tui.jobsheet_form import JobSheetForm

        c = self.selected()
        if c is None or self.original is None:
            self.notify("Rank substitutes for a stored original first.", severity="warning")
            return

        def done(path: str | None) -> None:
            if path:
                self._status(Text(f"Job sheet written to {path}", style="green"))
                self.notify(f"Job sheet written to {path}")

        self.app.push_screen(JobSheetForm(self.db, self.original, c.designation,
                                          stress=self.result.stress,
                                          policy=self.result.policy.name), done)

    def action_save_report(self) -> None:
        if self.result is None:
            self.notify("Rank substitutes first.", severity="warning")
            return
        default = f"substitutes-{(self.original or 'spec').lower()}.md"

        def check(values: dict[str, str]) -> str:
            from partsdb.services.files import protected_files

            substitution.write_report(self.result, values["path"], job=values["job"] or None,
                                      protect=protected_files(self.db))
            return ""

        self.app.push_screen(PromptForm("Save the report (Markdown .md or HTML .html)",
                                        [("path", "File", default), ("job", "Job ref.", "")],
                                        check),
                             lambda v: v and self.notify(f"Report saved to {v['path']}."))

    def action_to_stage(self) -> None:
        c = self.selected()
        if c is None or self.original is None:
            self.notify("Rank substitutes for a stored original first.", severity="warning")
            return
        app: Any = self.app
        original, chosen = self.original, c.designation
        app.show_then("stage", lambda view: view.fill(original, chosen))


def problem_text(problem: Any) -> Text:
    """One problem of a candidate: ``FLAG <message>`` for a flag, else the check's status word,
    parameter and note (each problem once: a flag never repeats a check's note)."""
    if problem.is_flag:
        return Text("FLAG ", style="bold yellow") + Text(problem.note)
    head = Text(problem.status.upper() + " ", style=STATUS_STYLE.get(problem.status, ""))
    return head + Text(f"{LABEL.get(problem.parameter, problem.parameter)}: {problem.note}")


def _short_caution() -> str:
    from partsdb.cautions import SHORT_CAUTION

    return SHORT_CAUTION.removeprefix("Caution: ")
