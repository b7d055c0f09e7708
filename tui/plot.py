"""A small Vce-Ic plot drawn with text characters: allowed-power curves, load line, points.

The picture is computed on a character grid: each column is one Vce step, each row one Ic
step. The allowed-power curve is Ic = P(allowed)/Vce (operating.py, standard safe-operating-
area reading); the DC load line is Ic = (Vcc - Vce)/(Rc + Re) with the base current neglected
(common practice). Every mark is also named in the legend, so colour is never the only cue.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from rich.text import Text
from textual.widget import Widget


@dataclass
class Curve:
    """Ic = power / Vce, drawn with ``mark`` in ``style``."""

    label: str
    power: float
    mark: str
    style: str


@dataclass
class PlotData:
    vcc: float
    load_resistance: float | None
    """Rc + Re, ohms (None: no load line)."""
    curves: list[Curve] = field(default_factory=list)
    points: list[tuple[str, str, float, float, str]] = field(default_factory=list)
    """(mark, label, Vce, Ic, style) of each operating point."""


def draw(data: PlotData, width: int, height: int) -> Text:
    """The plot as Rich text of ``height`` lines by ``width`` cells (axes and legend included)."""
    from partsdb.units import format_quantity

    label_w = 8
    cols = max(10, width - label_w - 1)
    legend = legend_lines(data, width)
    rows = max(4, height - 2 - len(legend))
    vmax = data.vcc * 1.05 if data.vcc > 0 else 1.0
    ics = [ic for _, _, _, ic, _ in data.points if ic > 0]
    if data.load_resistance:
        ics.append(data.vcc / data.load_resistance)
    imax = max(ics) * 1.25 if ics else 1e-3
    grid: list[list[tuple[str, str]]] = [[(" ", "")] * cols for _ in range(rows)]

    def put(col: int, row: int, mark: str, style: str) -> None:
        if 0 <= col < cols and 0 <= row < rows:
            grid[rows - 1 - row][col] = (mark, style)

    def to_row(ic: float) -> int:
        return round(ic / imax * (rows - 1))

    if data.load_resistance:
        for col in range(cols):
            vce = (col + 0.5) / cols * vmax
            ic = (data.vcc - vce) / data.load_resistance
            if ic >= 0:
                put(col, to_row(ic), "·", "dim")
    for curve in data.curves:
        for col in range(cols):
            vce = (col + 0.5) / cols * vmax
            ic = curve.power / vce
            if ic <= imax:
                put(col, to_row(ic), curve.mark, curve.style)
    for mark, _, vce, ic, style in data.points:
        put(min(cols - 1, int(vce / vmax * cols)), to_row(ic), mark, style)

    out = Text()
    for r, line in enumerate(grid):
        if r == 0:
            label = format_quantity(imax, "A")
        elif r == rows - 1:
            label = "0"
        else:
            label = ""
        out.append(label.rjust(label_w) + "│", style="dim")
        for mark, style in line:
            out.append(mark, style=style)
        out.append("\n")
    out.append(" " * label_w + "└" + "─" * cols + "\n", style="dim")
    out.append(" " * label_w + " 0" + ("Vce " + format_quantity(vmax, "V")).rjust(cols - 1) + "\n",
               style="dim")
    out.append_text(Text("\n").join(legend))
    return out


def legend_lines(data: PlotData, width: int) -> list[Text]:
    """Every mark with its name, packed into lines of ``width`` cells (an entry is never split,
    so a narrow plot gets a taller legend rather than a cut one)."""
    entries: list[tuple[str, str, str]] = [(c.mark, c.style, c.label) for c in data.curves]
    entries += [(mark, style, label) for mark, label, _, _, style in data.points]
    if data.load_resistance:
        entries.append(("·", "dim", "load line"))
    lines: list[Text] = []
    line = Text("  ")
    for mark, style, label in entries:
        entry = Text(mark, style=style) + Text(f" {label}  ")
        if line.cell_len > 2 and line.cell_len + entry.cell_len - 2 > width:
            lines.append(line)
            line = Text("  ")
        line.append_text(entry)
    lines.append(line)
    return lines


class VcePlot(Widget):
    """Draws :class:`PlotData` to fit its size; empty until ``plot`` is called."""

    DEFAULT_CSS = "VcePlot { height: 14; }"

    def __init__(self, **kwargs: object) -> None:
        super().__init__(**kwargs)  # type: ignore[arg-type]
        self.data: PlotData | None = None

    def plot(self, data: PlotData | None) -> None:
        self.data = data
        self.refresh()

    def render(self) -> Text:
        if self.data is None:
            return Text("(the plot appears once the stage is solved)", style="dim")
        return draw(self.data, self.size.width, self.size.height)
