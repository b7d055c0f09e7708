"""Drawer labels: what a label says and where each mark goes on a sheet (pure layout, no files).

A label is laid out as a list of marks (text, lines, boxes, a code square) in millimetres from
the sheet's top-left corner, y growing downwards, as both PDF and SVG measure. The renderers in
``partsdb.services.labels`` draw the marks; nothing here knows a file format.

One label:

    +--------------------------------------------+
    | C2/D14                           [QR code] |   place path (bold)
    | Si NPN audio, TO-92                         |   the place's label text, when it has one
    |--------------------------------------------|
    | BC547B  NPN Si  45 V  100 mA  TO-92  |||   |   one line per device, the lead order
    | BC557   PNP Si  45 V  100 mA  TO-92  EBC   |   drawn as three leads with their letters
    +--------------------------------------------+

The code square holds the place path exactly as stored ("C2/D14"), no prefix, so a scanner
that types what it reads gives text the CLI's ``--at``/``--from``/``--to`` accept as it is.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

from partsdb.errors import InvalidInput
from partsdb.units import format_quantity

# ISO 216 A4 and ANSI/ASME Y14.1 US Letter (8.5 x 11 in), in millimetres.
PAPERS: dict[str, tuple[float, float]] = {"a4": (210.0, 297.0), "letter": (215.9, 279.4)}

PT = 25.4 / 72  # one typographic point in millimetres (PostScript point, 1/72 in)

# Smallest label that still holds a path line and one device line legibly (our choice).
MIN_LABEL_W = 40.0
MIN_LABEL_H = 18.0

# Helvetica's widest common glyphs are about 0.72 em (capitals such as "M", "W"); digits are
# 0.556 em (Adobe's Helvetica metrics). Text is cut to fit with this conservative average so
# that a line never runs into the next label; the renderers draw Helvetica (or a sans-serif).
_AVG_EM = 0.6


class LabelError(InvalidInput):
    """A sheet layout that cannot be printed; the message names the option and value."""


@dataclass(frozen=True)
class LabelDevice:
    """One device as a label shows it."""

    designation: str
    polarity: str  # "npn" / "pnp"
    material: str  # "si" / "ge"
    vceo: float | None
    ic_max: float | None
    package: str | None
    pinout: str | None  # E/B/C (a FET: G/D/S, four for a dual-gate) in lead order, or None
    kind: str = "bjt"
    """bjt, darlington, mosfet or jfet; for a FET ``vceo`` and ``ic_max`` hold Vds and Id max."""


@dataclass(frozen=True)
class LabelContent:
    """What one drawer or bin label says."""

    path: str
    devices: tuple[LabelDevice, ...] = ()
    label_text: str | None = None
    """The place's own label text ("Si PNP audio, TO-92"); None while places have none."""


@dataclass(frozen=True)
class SheetLayout:
    """A sheet of equal labels: paper, grid and margins in millimetres."""

    paper: str = "a4"
    rows: int = 8
    columns: int = 3
    margin: float = 10.0
    gap: float = 2.0
    code: bool = True
    """Whether each label carries the place path as a QR code."""

    @property
    def size(self) -> tuple[float, float]:
        return PAPERS[self.paper]

    @property
    def label_size(self) -> tuple[float, float]:
        width, height = self.size
        w = (width - 2 * self.margin - (self.columns - 1) * self.gap) / self.columns
        h = (height - 2 * self.margin - (self.rows - 1) * self.gap) / self.rows
        return w, h

    def validate(self) -> SheetLayout:
        if self.paper not in PAPERS:
            raise LabelError(f"paper: {self.paper!r} is not valid; expected one of "
                             + ", ".join(PAPERS))
        for name, value in (("rows", self.rows), ("columns", self.columns)):
            if isinstance(value, bool) or not isinstance(value, int) or value < 1:
                raise LabelError(f"{name}: {value!r} is not valid; expected a whole number above 0")
        for name, number in (("margin", self.margin), ("gap", self.gap)):
            if not 0 <= number <= 50:
                raise LabelError(f"{name}: {number!r} is not valid; expected 0 to 50 mm")
        w, h = self.label_size
        if w < MIN_LABEL_W or h < MIN_LABEL_H:
            raise LabelError(
                f"rows/columns: {self.rows} x {self.columns} on {self.paper} with {self.margin:g} mm "
                f"margins gives labels {w:.1f} x {h:.1f} mm; expected at least "
                f"{MIN_LABEL_W:g} x {MIN_LABEL_H:g} mm (fewer rows or columns, or smaller margins)")
        return self

    @property
    def per_sheet(self) -> int:
        return self.rows * self.columns


# ---------------------------------------------------------------- marks

@dataclass(frozen=True)
class Text:
    x: float
    y: float  # baseline
    size: float  # points
    text: str
    bold: bool = False


@dataclass(frozen=True)
class Line:
    x1: float
    y1: float
    x2: float
    y2: float
    width: float = 0.2


@dataclass(frozen=True)
class Box:
    x: float
    y: float
    w: float
    h: float
    width: float = 0.2
    dashed: bool = False


@dataclass(frozen=True)
class Code:
    """A square QR code of ``text`` with its top-left corner at (x, y)."""

    x: float
    y: float
    size: float
    text: str


Mark = Text | Line | Box | Code


@dataclass
class Sheet:
    width: float
    height: float
    marks: list[Mark] = field(default_factory=list)


# ---------------------------------------------------------------- text helpers

Measure = Callable[[str, float, bool], float]
"""Width in mm of a text at a size in points, bold or not (the renderer's font metrics)."""


def rough_width(text: str, size_pt: float, bold: bool = False) -> float:
    """A conservative width when no font metrics are at hand (our estimate, on the wide side)."""
    return len(text) * size_pt * PT * (_AVG_EM + (0.05 if bold else 0))


def fit(text: str, width_mm: float, size_pt: float, bold: bool = False,
        measure: Measure = rough_width) -> str:
    """``text``, or its start with "..." appended, whichever fits ``width_mm``."""
    if measure(text, size_pt, bold) <= width_mm:
        return text
    for end in range(len(text) - 1, 0, -1):
        cut = text[:end].rstrip() + "..."
        if measure(cut, size_pt, bold) <= width_mm:
            return cut
    return text[:1]


def device_facts(device: LabelDevice) -> str:
    """"NPN Si  45 V  100 mA  TO-92" (a dash for a value not stored)."""
    fet = device.kind in ("mosfet", "jfet")
    word = {("mosfet", "n"): "NMOS", ("mosfet", "p"): "PMOS", ("jfet", "n"): "NJFET",
            ("jfet", "p"): "PJFET"}.get((device.kind, device.polarity), device.polarity.upper())
    parts = [f"{word} {device.material.capitalize()}",
             format_quantity(device.vceo, "V", 3) if device.vceo is not None
             else ("Vds -" if fet else "Vceo -"),
             format_quantity(device.ic_max, "A", 3) if device.ic_max is not None
             else ("Id -" if fet else "Ic -"),
             device.package or "-"]
    return "  ".join(parts)


FIGURE_W = 7.5  # mm: three leads at 2.5 mm pitch
FIGURE_PT = 4.5


def lead_figure(x: float, y: float, pinout: str, measure: Measure = rough_width) -> list[Mark]:
    """The lead order as a small figure: a body, three leads down, their letters beneath.

    Read left to right as stored (facing the flat, marked side, leads down; see the pinout row
    of ``device.FIELDS``). ``(x, y)`` is the top-left corner; 7.5 mm wide, 4.0 mm high.
    """
    leads = pinout[:4]  # three leads, or four for a dual-gate FET
    pitch = FIGURE_W / max(len(leads), 1)
    marks: list[Mark] = [Box(x, y, FIGURE_W, 1.2, width=0.2)]
    for i, letter in enumerate(leads):
        cx = x + pitch / 2 + i * pitch
        marks.append(Line(cx, y + 1.2, cx, y + 2.4, width=0.3))
        half = measure(letter, FIGURE_PT, True) / 2
        marks.append(Text(cx - half, y + 2.4 + FIGURE_PT * PT, FIGURE_PT, letter, bold=True))
    return marks


# ---------------------------------------------------------------- layout

def layout_label(content: LabelContent, x: float, y: float, w: float, h: float,
                 code: bool, measure: Measure = rough_width) -> list[Mark]:
    """The marks of one label in the cell at (x, y) of size w x h (mm).

    The code square sits in the top-right corner; the path (and label text) to its left, then
    one row per device, the rows beside the code square made shorter to clear it.
    """
    pad = 1.8
    marks: list[Mark] = [Box(x, y, w, h, width=0.1, dashed=True)]  # cutting guide
    right = x + w - pad
    code_size = min(14.0, h * 0.45, w * 0.3) if code else 0.0
    code_bottom = y
    if code_size >= 8:
        marks.append(Code(right - code_size, y + pad, code_size, content.path))
        code_bottom = y + pad + code_size + 0.8
    else:
        code_size = 0.0

    def right_at(top: float) -> float:
        return right - code_size - 1.5 if top < code_bottom else right

    head_pt = 11.0
    top = y + pad + head_pt * PT * 0.8
    marks.append(Text(x + pad, top, head_pt,
                      fit(content.path, right_at(y) - x - pad, head_pt, True, measure), bold=True))
    if content.label_text:
        sub_pt = 7.5
        top += sub_pt * PT + 0.9
        marks.append(Text(x + pad, top, sub_pt,
                          fit(content.label_text, right_at(top) - x - pad, sub_pt, False, measure)))
    top += 1.3
    row_pt = 6.5
    row_h = 4.6  # the lead figure (4.0 mm) and a little air
    bottom = y + h - pad
    devices = list(content.devices)
    # Rows go below the code square, full width, when they all fit there; else beside it.
    if code_size and len(devices) <= int((bottom - code_bottom - 0.5) // row_h):
        top = max(top, code_bottom)
    marks.append(Line(x + pad, top, right_at(top), top, width=0.15))
    room = int((bottom - top - 0.5) // row_h)
    if not devices:
        marks.append(Text(x + pad, top + 0.5 + row_pt * PT + 0.6, row_pt, "(empty)"))
        return marks
    shown = devices if len(devices) <= room else devices[: max(0, room - 1)]
    for i, device in enumerate(shown):
        row_top = top + 0.5 + i * row_h
        edge = right_at(row_top)
        base = row_top + 2.9
        name_w = measure(device.designation + "  ", row_pt, True)
        facts_w = edge - FIGURE_W - 1.2 - (x + pad) - name_w
        marks.append(Text(x + pad, base, row_pt, device.designation, bold=True))
        marks.append(Text(x + pad + name_w, base, row_pt,
                          fit(device_facts(device), facts_w, row_pt, False, measure)))
        if device.pinout:
            marks.extend(lead_figure(edge - FIGURE_W, row_top + 0.2, device.pinout, measure))
        else:
            marks.append(Text(edge - FIGURE_W, base, FIGURE_PT, "leads ?"))
    hidden = len(devices) - len(shown)
    if hidden:
        row_top = top + 0.5 + len(shown) * row_h
        marks.append(Text(x + pad, row_top + 2.9, row_pt, f"+ {hidden} more (see partsdb stock)"))
    return marks


def layout_sheets(labels: Sequence[LabelContent], layout: SheetLayout,
                  measure: Measure = rough_width) -> list[Sheet]:
    """Labels placed row by row on as many sheets as they need (at least one)."""
    layout.validate()
    width, height = layout.size
    w, h = layout.label_size
    sheets: list[Sheet] = []
    for index, content in enumerate(labels):
        slot = index % layout.per_sheet
        if slot == 0:
            sheets.append(Sheet(width, height))
        row, col = divmod(slot, layout.columns)
        x = layout.margin + col * (w + layout.gap)
        y = layout.margin + row * (h + layout.gap)
        sheets[-1].marks.extend(layout_label(content, x, y, w, h, layout.code, measure))
    return sheets or [Sheet(width, height)]
