"""Drawer labels from the stock: which places get one, and drawing them to PDF or SVG.

PDF goes through fpdf2 and the QR codes through segno, both in the optional ``print`` extra
(``pip install 'partsdb-drawers[print]'``); without them the command says so in one line (exit 3).
SVG is written here directly (plain XML, no library needed beyond segno for the codes).

A file is written to a temporary name in the target's folder and renamed into place, so a
failed run leaves no half-written file; an existing file is refused unless ``force``.
"""

from __future__ import annotations

import os
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any
from xml.sax.saxutils import escape

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from partsdb.errors import EnvironmentProblem, InvalidInput
from partsdb.labels import (
    Box,
    Code,
    LabelContent,
    LabelDevice,
    Line,
    Mark,
    Measure,
    Sheet,
    SheetLayout,
    Text,
    layout_sheets,
    rough_width,
)
from partsdb.services.stock import normalize_path, require_location
from partsdb.storage.models import DeviceRow, LocationRow, LotRow

FORMATS = ("pdf", "svg")
_MISSING = "labels: {what} needs the optional packages fpdf2 and segno; install them with " \
           "pip install 'partsdb-drawers[print]'"


# ---------------------------------------------------------------- what to label

def label_contents(session: Session, places: Sequence[str] = ()) -> list[LabelContent]:
    """One label per place that holds lots, at or below ``places`` (all places when empty).

    A place named on its own that holds nothing and has no places in it gets a label too
    (a new, empty bin). Unknown places are refused (exit 1).
    """
    named = [require_location(session, p) for p in places]
    rows = session.execute(
        select(LocationRow, DeviceRow)
        .join(LotRow, LotRow.location_id == LocationRow.id)
        .join(DeviceRow, LotRow.device_id == DeviceRow.id)
        .distinct()
        .order_by(LocationRow.path, DeviceRow.key)).all()
    holdings: dict[int, tuple[LocationRow, list[DeviceRow]]] = {}
    for place, device in rows:
        holdings.setdefault(place.id, (place, []))[1].append(device)
    if named:
        prefixes = [normalize_path(p.path).lower() for p in named]

        def wanted(path: str) -> bool:
            low = path.lower()
            return any(low == p or low.startswith(p + "/") for p in prefixes)

        holdings = {k: v for k, v in holdings.items() if wanted(v[0].path)}
        for place in named:
            has_children = session.scalar(
                select(func.count()).select_from(LocationRow)
                .where(LocationRow.parent_id == place.id))
            if place.id not in holdings and not has_children:
                holdings[place.id] = (place, [])
    out = []
    for place, devices in sorted(holdings.values(), key=lambda v: v[0].path.lower()):
        out.append(LabelContent(
            path=place.path,
            # Places gain their own label text with the place records (issue 16, item 1);
            # until then the attribute is absent and the label shows what the place holds.
            label_text=getattr(place, "label", None),
            devices=tuple(_label_device(d) for d in devices)))
    return out


def _label_device(row: DeviceRow) -> LabelDevice:
    if row.kind in ("mosfet", "jfet"):  # a FET's ratings: Vds and Id max
        return LabelDevice(row.designation, row.polarity, row.material, row.vds, row.id_max,
                           row.package, row.pinout, row.kind)
    return LabelDevice(row.designation, row.polarity, row.material, row.vceo, row.ic_max,
                       row.package, row.pinout, row.kind)


# ---------------------------------------------------------------- drawing

def _qr_runs(text: str) -> tuple[int, list[tuple[int, int, int]]]:
    """The QR code of ``text`` as (modules per side, [(row, first column, length)]) of dark runs.

    Error correction level M (ISO/IEC 18004 sec. 4.9: about 15 % of the code may be lost),
    with a 2-module quiet zone (the label around it is blank).
    """
    import segno

    qr = segno.make(text, error="m", micro=False, boost_error=False)
    border = 2
    runs: list[tuple[int, int, int]] = []
    n = 0
    for r, row in enumerate(qr.matrix_iter(border=border)):
        row = list(row)
        n = len(row)
        c = 0
        while c < n:
            if row[c]:
                start = c
                while c < n and row[c]:
                    c += 1
                runs.append((r, start, c - start))
            else:
                c += 1
    return n, runs


def _latin(text: str) -> str:
    """PDF core fonts speak cp1252; anything else is shown as "?" rather than failing."""
    return text.encode("cp1252", "replace").decode("cp1252")


def helvetica_width() -> Measure:
    """Text widths from fpdf2's Helvetica metrics (Adobe's core-font widths), or the rough
    estimate when fpdf2 is not installed (SVG output without the ``print`` extra)."""
    try:
        from fpdf import FPDF
    except ModuleNotFoundError:
        return rough_width
    pdf = FPDF(unit="mm")

    def width(text: str, size_pt: float, bold: bool = False) -> float:
        pdf.set_font("Helvetica", style="B" if bold else "", size=size_pt)
        return float(pdf.get_string_width(_latin(text)))

    return width


def render_pdf(sheets: Sequence[Sheet], paper: str) -> bytes:
    try:
        from fpdf import FPDF
    except ModuleNotFoundError as err:
        raise EnvironmentProblem(_MISSING.format(what="PDF output")) from err
    pdf = FPDF(unit="mm", format="A4" if paper == "a4" else "Letter")
    pdf.set_auto_page_break(False)
    pdf.set_creator("partsdb")
    pdf.set_title("Drawer labels")
    for sheet in sheets:
        pdf.add_page()
        for mark in sheet.marks:
            _pdf_mark(pdf, mark)
    return bytes(pdf.output())


def _pdf_mark(pdf: Any, mark: Mark) -> None:
    if isinstance(mark, Text):
        pdf.set_font("Helvetica", style="B" if mark.bold else "", size=mark.size)
        pdf.text(mark.x, mark.y, _latin(mark.text))
    elif isinstance(mark, Line):
        pdf.set_line_width(mark.width)
        pdf.line(mark.x1, mark.y1, mark.x2, mark.y2)
    elif isinstance(mark, Box):
        pdf.set_line_width(mark.width)
        if mark.dashed:
            pdf.set_dash_pattern(dash=1, gap=1)
        pdf.rect(mark.x, mark.y, mark.w, mark.h, style="D")
        if mark.dashed:
            pdf.set_dash_pattern()
    elif isinstance(mark, Code):
        n, runs = _qr_runs(mark.text)
        module = mark.size / n
        pdf.set_fill_color(0, 0, 0)
        for r, c, length in runs:
            pdf.rect(mark.x + c * module, mark.y + r * module, length * module, module, style="F")


def render_svg(sheet: Sheet) -> bytes:
    w, h = sheet.width, sheet.height
    out = ['<?xml version="1.0" encoding="UTF-8"?>',
           f'<svg xmlns="http://www.w3.org/2000/svg" width="{w:g}mm" height="{h:g}mm" '
           f'viewBox="0 0 {w:g} {h:g}">',
           '<rect x="0" y="0" width="100%" height="100%" fill="white"/>',
           '<g font-family="Helvetica, Arial, sans-serif" fill="black" stroke-linecap="butt" '
           'xml:space="preserve">']
    for mark in sheet.marks:
        if isinstance(mark, Text):
            weight = ' font-weight="bold"' if mark.bold else ""
            out.append(f'<text x="{mark.x:.2f}" y="{mark.y:.2f}" font-size="{mark.size * 25.4 / 72:.3f}"'
                       f'{weight}>{escape(mark.text)}</text>')
        elif isinstance(mark, Line):
            out.append(f'<line x1="{mark.x1:.2f}" y1="{mark.y1:.2f}" x2="{mark.x2:.2f}" '
                       f'y2="{mark.y2:.2f}" stroke="black" stroke-width="{mark.width:g}"/>')
        elif isinstance(mark, Box):
            dash = ' stroke-dasharray="1 1"' if mark.dashed else ""
            out.append(f'<rect x="{mark.x:.2f}" y="{mark.y:.2f}" width="{mark.w:.2f}" '
                       f'height="{mark.h:.2f}" fill="none" stroke="black" '
                       f'stroke-width="{mark.width:g}"{dash}/>')
        elif isinstance(mark, Code):
            n, runs = _qr_runs(mark.text)
            module = mark.size / n
            d = " ".join(f"M{mark.x + c * module:.3f} {mark.y + r * module:.3f}"
                         f"h{length * module:.3f}v{module:.3f}h{-length * module:.3f}z"
                         for r, c, length in runs)
            out.append(f'<path d="{d}" fill="black"><title>{escape(mark.text)}</title></path>')
    out += ["</g>", "</svg>", ""]
    return "\n".join(out).encode("utf-8")


# ---------------------------------------------------------------- the file

def _require(*modules: str | None) -> None:
    """One clear line (exit 3) when an optional package of the ``print`` extra is missing."""
    import importlib.util

    for name in modules:
        if name and importlib.util.find_spec(name) is None:
            what = "PDF output" if name == "fpdf" else "the QR code (--no-code to leave it off)"
            raise EnvironmentProblem(_MISSING.format(what=what))


def output_format(path: str | os.PathLike[str]) -> str:
    suffix = Path(path).suffix.lower().lstrip(".")
    if suffix not in FORMATS:
        raise InvalidInput(f"--output: {os.fspath(path)!r} does not end in .pdf or .svg; "
                           "expected a file name such as labels.pdf")
    return suffix


def write_file(path: str | os.PathLike[str], data: bytes, force: bool = False,
               protect: Iterable[Path] = ()) -> None:
    """Write ``data`` to ``path`` through the one file writer (:mod:`partsdb.services.files`):
    an existing file only with ``force``, never a database file, temporary name and rename."""
    from partsdb.services.files import atomic_path

    with atomic_path(path, force=force, protect=protect, what="--output") as tmp:
        tmp.write_bytes(data)


def print_labels(labels: Sequence[LabelContent], layout: SheetLayout,
                 output: str | os.PathLike[str], force: bool = False,
                 protect: Iterable[Path] = ()) -> int:
    """Lay out ``labels`` and write them to ``output`` (.pdf or .svg); returns the sheet count."""
    fmt = output_format(output)
    _require("fpdf" if fmt == "pdf" else None, "segno" if layout.code else None)
    sheets = layout_sheets(labels, layout, helvetica_width())
    if fmt == "pdf":
        data = render_pdf(sheets, layout.paper)
    else:
        if len(sheets) > 1:
            raise InvalidInput(
                f"--output: {len(labels)} labels fill {len(sheets)} sheets and an SVG file holds "
                "one; write a .pdf, name fewer places, or use more rows or columns")
        data = render_svg(sheets[0])
    write_file(output, data, force, protect)
    return len(sheets)


def resolve_layout(**options: Any) -> SheetLayout:
    """The sheet layout: built-in defaults, then the config file's ``[labels]``, then options.

    Options that are None were not given. The result is validated (LabelError, exit 2).
    """
    from partsdb.services.config import load_label_settings

    merged: dict[str, Any] = {**load_label_settings()}
    merged.update({k: v for k, v in options.items() if v is not None})
    if "paper" in merged:
        merged["paper"] = str(merged["paper"]).lower()
    return SheetLayout(**merged).validate()


def label_summary(labels: Sequence[LabelContent], layout: SheetLayout, sheets: int,
                  output: str | os.PathLike[str]) -> dict[str, Any]:
    """What was written, for the CLI's JSON and table output."""
    w, h = layout.label_size
    return {"output": os.fspath(output), "labels": len(labels), "sheets": sheets,
            "paper": layout.paper, "rows": layout.rows, "columns": layout.columns,
            "margin_mm": layout.margin, "gap_mm": layout.gap,
            "label_mm": [round(w, 1), round(h, 1)], "code": layout.code,
            "places": [c.path for c in labels]}
