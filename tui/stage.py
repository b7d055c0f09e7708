"""The Stage view: one common-emitter stage solved for the original and the substitute.

(Named Stage, not Bench: ``partsdb bench`` is the performance harness.) The user gives the
network, the supply (its magnitude, or a PNP stage's negative supply as drawn: the same rule as
``partsdb bias``, :func:`partsdb.bias.supply_magnitude`) and the resistors (R-notation such as 2k2 or 4R7
accepted), the ambient temperature and the two designations. :func:`partsdb.bias.predict_swap`
solves both operating points and proposes the one resistor change (nearest E12/E24 value);
:func:`partsdb.operating.check_operating_point` gives each device's allowed dissipation, drawn
with both points on a small Vce-Ic plot. The plot sits beside the results when the screen is
wide and below the form when it is not (two plots, one shown by the layout), so result values
never wrap at 80 columns.
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
from textual.widgets import Button, Label, Select, Static

from partsdb.cautions import SHORT_CAUTION
from tui.inputs import TextField
from tui.plot import Curve, PlotData, VcePlot
from tui.wording import in_labels

if TYPE_CHECKING:
    from partsdb.bias import BiasReport
    from partsdb.device import Device
    from partsdb.storage.database import Database

# (id, label, unit, initial value). The initial stage is a textbook-style divider stage
# (common practice values), there only so the form is not empty.
FIELDS: tuple[tuple[str, str, str, str], ...] = (
    ("vcc", "Vcc", "V", "12V"),
    ("r1", "R1", "Ω", "47k"),
    ("r2", "R2", "Ω", "10k"),
    ("rb", "Rb", "Ω", ""),
    ("rc", "Rc", "Ω", "2k2"),
    ("re", "Re", "Ω", "470"),
    ("ambient", "Ambient", "°C", "25"),  # read by parse_temperature: 45, 45 °C or 318K
)
DEFAULT_NETWORK = "divider"
"""The network the form starts with (one of partsdb.bias.NETWORKS)."""
PLOT_HEIGHT = 14
"""Rows of the Vce-Ic plot (as in partsdb.tcss)."""
WIDE = 110
"""Columns from which the results may share their side with the plot (the app's -wide)."""
SUPPLY_HINT = "Vcc: its magnitude, or a PNP stage's negative supply as drawn (-9V)"
"""The supply rule on screen (the CLI's ``bias --vcc`` rule, partsdb.bias.supply_magnitude)."""
EMPTY_RESULT = "Fill the stage and press Enter to solve it."
STATUS_STYLE = {"ok": "green", "marginal": "yellow", "under-rated": "bold red", "unknown": "dim"}


class StageView(Horizontal):
    """Stage form on the left; both operating points, the fix and (wide) the plot on the right."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("ctrl+r", "solve", "Solve"),
                                              Binding("ctrl+s", "job_sheet", "Job sheet")]

    def __init__(self, db: Database, **kwargs: Any) -> None:
        super().__init__(**kwargs)
        self.db = db
        self.report: BiasReport | None = None
        self.ambient = 25.0
        """The ambient the report was solved at (for the job sheet)."""
        self._networks_loaded = False

    def compose(self) -> ComposeResult:
        # Only the default network until the view is first shown: partsdb.bias imports scipy
        # (about 0.7 s), which must not delay the app's first screen. load() adds the rest.
        with VerticalScroll(id="stage-form"):
            with Horizontal(classes="form-row"):
                yield Label("Network", classes="form-label")
                yield Select([(DEFAULT_NETWORK, DEFAULT_NETWORK)], value=DEFAULT_NETWORK,
                             allow_blank=False, id="sg-network", compact=True)
            for ident, label, _unit, value in FIELDS:
                with Horizontal(classes="form-row"):
                    yield Label(label, classes="form-label")
                    yield TextField(value, id=f"sg-{ident}", compact=True, classes="form-input")
            for ident, label in (("original", "Original"), ("substitute", "Substitute")):
                with Horizontal(classes="form-row"):
                    yield Label(label, classes="form-label")
                    yield TextField("", placeholder="designation", id=f"sg-{ident}",
                                    compact=True, classes="form-input")
            yield Static(SUPPLY_HINT, id="stage-hint", classes="form-hint")
            yield Button("Solve", id="sg-solve", compact=True, variant="primary")
            yield Static("", id="stage-error", classes="form-error")
            yield VcePlot(id="stage-plot-narrow", classes="stage-plot")
        with Vertical(id="stage-right"):
            with VerticalScroll(id="stage-result-box"):
                yield Static(EMPTY_RESULT, id="stage-result")
                yield VcePlot(id="stage-plot-wide", classes="stage-plot")
            # Always in sight, not at the end of a scrolled result.
            yield Static(Text(SHORT_CAUTION, style="bold"), id="stage-caution")

    def load(self) -> None:
        """Offer every network the bias library solves (once); nothing else to read."""
        if self._networks_loaded:
            return
        from partsdb.bias import NETWORKS

        self._networks_loaded = True
        select = self.query_one("#sg-network", Select)
        chosen = select.value
        select.set_options([(n, n) for n in NETWORKS])
        if chosen in NETWORKS:
            select.value = chosen

    def fill(self, original: str | None = None, substitute: str | None = None) -> None:
        """Put designations into the form (from the Substitute view). The result shown was for
        another pair: it is cleared, so it is never read as this pair's."""
        if original is not None:
            self.query_one("#sg-original", TextField).value = original
        if substitute is not None:
            self.query_one("#sg-substitute", TextField).value = substitute
        self.clear_result()

    def clear_result(self) -> None:
        """Forget the solved report: empty result, empty plots, no error."""
        self.report = None
        self.query_one("#stage-result", Static).update(EMPTY_RESULT)
        self.query_one("#stage-error", Static).update("")
        for plot in self.query(VcePlot):
            plot.plot(None)

    @on(TextField.Submitted)
    @on(Button.Pressed, "#sg-solve")
    def action_solve(self) -> None:
        error = self.query_one("#stage-error", Static)
        try:
            self.report, devices, ambient = self._solve()
            self.ambient = ambient
        except (ValueError, LookupError) as err:
            error.update(Text("NOT SOLVED: " + in_labels(str(err)), style="bold yellow"))
            return
        error.update("")
        self._show(self.report, devices, ambient)

    def action_job_sheet(self) -> None:
        """Write the job sheet of the solved pair with this stage (a small form asks for the
        job reference and the file)."""
        from partsdb.services.jobsheet import StageSpec
        from tui.jobsheet_form import JobSheetForm

        report = self.report
        if report is None or report.substitute is None:
            self.app.notify("Solve a stage with an original and a substitute first.",
                            timeout=3)
            return
        stage = StageSpec(report.stage, self.ambient)

        def done(path: str | None) -> None:
            if path:
                self.app.notify(f"Job sheet written to {path}", timeout=5)

        self.app.push_screen(JobSheetForm(self.db, report.original.device,
                                          report.substitute.device, stage), done)

    def _text(self, ident: str) -> str:
        return self.query_one(f"#sg-{ident}", TextField).value.strip()

    def _device(self, session: Any, field: str) -> Device | None:
        from partsdb.services import catalog

        text = self._text(field)
        if not text:
            return None
        device = catalog.get_device(session, text)
        if device is None:
            raise LookupError(f"{field}: {text!r} is not in the catalog"
                              f"{catalog.did_you_mean(session, text)}")
        return device

    def _solve(self) -> tuple[BiasReport, list[Device], float]:
        from partsdb.bias import (
            Stage,
            analyse_bias,
            params_from_device,
            predict_swap,
            supply_magnitude,
        )
        from partsdb.units import parse_quantity, parse_temperature

        network = str(self.query_one("#sg-network", Select).value)
        values: dict[str, float | None] = {}
        for ident, label, unit, _ in FIELDS:
            text = self._text(ident)
            if not text:
                values[ident] = None
            elif ident == "ambient":  # °C, or kelvin with a K ("318K")
                values[ident] = parse_temperature(text, label)
            else:
                values[ident] = parse_quantity(text, unit, label)
        needed = ("r1", "r2") if network == "divider" else ("rb",)
        for name in ("r1", "r2", "rb"):
            if name not in needed:
                values[name] = None
        if values["vcc"] is None:
            raise ValueError("Vcc: empty; expected a supply voltage such as 12V (-9V for a PNP "
                             "stage)")
        ambient = values.pop("ambient")
        ambient = 25.0 if ambient is None else ambient
        with self.db.session() as session:
            original = self._device(session, "original")
            substitute = self._device(session, "substitute")
        if original is None:
            raise ValueError("original: empty; expected the designation of the part in the set")
        original_params = params_from_device(original)
        stage = Stage(network=network,
                      vcc=supply_magnitude(values["vcc"], original_params.polarity, "Vcc"),
                      rc=values["rc"] or 0.0,
                      re=values["re"] if values["re"] is not None else 0.0,
                      r1=values["r1"], r2=values["r2"], rb=values["rb"])
        if substitute is None:
            report = analyse_bias(stage, original_params, ambient=ambient)
            return report, [original], ambient
        report = predict_swap(stage, original_params, params_from_device(substitute),
                              ambient=ambient)
        return report, [original, substitute], ambient

    def _show(self, report: BiasReport, devices: list[Device], ambient: float) -> None:
        from partsdb.operating import check_operating_point
        from partsdb.units import format_quantity as fq

        results = [report.original] + ([report.substitute] if report.substitute else [])
        # One value per cell and no cell wraps: at 80 columns the results get about 48
        # characters, and a value split over two lines ("1.63" / "V") misreads.
        table = Table(box=None, padding=(0, 1), header_style="bold")
        table.add_column("", no_wrap=True)
        for r in results:
            table.add_column(r.device, justify="right", no_wrap=True)
        rows: list[tuple[str, list[str]]] = [
            ("Ic", [fq(r.point.ic, "A") for r in results]),
            ("Vce", [fq(r.point.vce, "V") for r in results]),
            ("Vb", [fq(r.point.vb, "V") for r in results]),
            ("Ve", [fq(r.point.ve, "V") for r in results]),
            ("Dissipation", [fq(r.point.power, "W") for r in results]),
            ("Region", [r.point.region for r in results]),
            ("Ic, hFE min", [fq(r.ic_hfe_min, "A") for r in results]),
            ("Ic, hFE max", [fq(r.ic_hfe_max, "A") for r in results]),
        ]
        checks = []
        for device, r in zip(devices, results, strict=False):
            checks.append(check_operating_point(device, r.point.vce, r.point.ic, r.point.power,
                                                ambient=ambient))
        rows.append(("Ptot allowed", [fq(c.p_allowed, "W") if c.p_allowed else "—" for c in checks]))
        for name, cells in rows:
            table.add_row(name, *cells)
        status = Text("Checks: ")
        for c in checks:
            status.append(f"{c.device} ")
            status.append(c.worst, style=STATUS_STYLE.get(c.worst, ""))
            status.append("  ")
        parts: list[Any] = [Text(f"{report.stage.network} stage, {model_name(report)} model, "
                                 f"{ambient:g} °C", style="bold"), table, status]
        if report.ic_change is not None:
            change = report.ic_change
            style = "green" if abs(change) < 0.1 else "yellow" if abs(change) < 0.3 else "bold red"
            shift = Text("Swap shifts Ic by ")
            shift.append(f"{change:+.0%}", style=style)
            shift.append(f", Vce by {report.vce_change:+.2f} V")
            parts.append(shift)
        if report.fix is not None:
            parts += fix_parts(report)
        for note in [*report.notes, *(n for r in results for n in r.notes),
                     *(n for c in checks for n in c.notes)]:
            parts.append(Text("· " + note, style="dim"))
        self.query_one("#stage-result", Static).update(Group(*parts))

        stage = report.stage
        load = (stage.rc + (stage.re or 0.0)) or None
        marks = (("O", "bold cyan", "▪", "cyan"), ("S", "bold magenta", "▫", "magenta"))
        data = PlotData(vcc=stage.vcc, load_resistance=load)
        for (mark, point_style, curve_mark, curve_style), r, c in zip(marks, results, checks,
                                                                      strict=False):
            if c.p_allowed:
                data.curves.append(Curve(f"P max {r.device}", c.p_allowed, curve_mark, curve_style))
            data.points.append((mark, r.device, r.point.vce, r.point.ic, point_style))
        for plot in self.query(VcePlot):
            plot.plot(data)
        self.call_after_refresh(self.place_plot)

    def on_resize(self) -> None:
        self.call_after_refresh(self.place_plot)

    def place_plot(self) -> None:
        """The plot beside the results (under them) when the screen is wide and they leave it
        room; else below the form. Both plots hold the same data; the layout shows one."""
        box = self.query_one("#stage-result-box")
        result = self.query_one("#stage-result", Static)
        room = box.size.height - result.outer_size.height >= PLOT_HEIGHT
        self.set_class(self.app.size.width >= WIDE and room, "-plot-beside")


def fix_parts(report: BiasReport) -> list[Any]:
    """The resistor fix: one line naming it, a table of the exact, E12 and E24 values with Ic at
    the typical hFE and at both ends of the window (a region other than active is named in
    the cell), and the target in words last (prose may wrap; the values do not)."""
    from partsdb.units import format_quantity as fq

    fix = report.fix
    assert fix is not None
    name = fix.resistor.upper()

    def ic(value: float, region: str) -> str:
        return fq(value, "A") + ("" if region in ("", "active") else f" {region}")

    table = Table(box=None, padding=(0, 1), header_style="bold cyan", style="cyan")
    for label in ("", name, "Ic", "hFE min", "hFE max"):
        table.add_column(label, justify="left" if not label else "right", no_wrap=True)
    table.add_row("exact", fq(fix.exact, "Ω"), fq(fix.target_ic, "A"), "", "")
    for label, opt in (("E12", fix.e12), ("E24", fix.e24)):
        table.add_row(label, fq(opt.value, "Ω"), ic(opt.ic, opt.region),
                      ic(opt.ic_hfe_min, opt.region_hfe_min),
                      ic(opt.ic_hfe_max, opt.region_hfe_max))
    return [Text(f"Fix: change {name} from {fq(fix.original_value, 'Ω')}", style="bold cyan"),
            table, Text(f"  target Ic {fq(fix.target_ic, 'A')}: {fix.target}", style="cyan")]


def model_name(report: BiasReport) -> str:
    return report.original.model
