"""Kit sheets from a kit plan: Markdown or PDF (fpdf2, the ``print`` extra), written through
the one file writer.

:func:`make_kit_sheet` turns a :class:`partsdb.services.kit.KitPlan` into a
:class:`partsdb.kitsheet.KitSheet`; :func:`write_kit_sheet` writes it, optionally running a
step (taking the kit) after the file is complete and before it is put in place, so a refused
take leaves no sheet behind.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Callable, Iterable
from datetime import date as _date
from pathlib import Path

from partsdb.designations import normalize
from partsdb.errors import EnvironmentProblem, InvalidInput
from partsdb.kitsheet import (
    LINE_HEADINGS,
    PICK_HEADINGS,
    SIGN_FIELDS,
    KitPick,
    KitSheet,
    KitSheetLine,
    render_markdown,
)
from partsdb.services.jobsheet import _latin
from partsdb.services.kit import KitPlan

FORMATS = ("md", "pdf")


def make_kit_sheet(plan: KitPlan, *, job: str | None = None,
                   date: str | None = None) -> KitSheet:
    """The sheet of ``plan`` for job ``job`` (blank when None) on ``date`` (today)."""
    lines = tuple(KitSheetLine(p.line.reference, p.line.designation, p.line.quantity, p.action,
                               p.part, p.verdict or "—") for p in plan.lines)
    refs: dict[tuple[str, str], list[str]] = defaultdict(list)
    for p in plan.lines:
        for location, _condition, _qty in p.picks:
            if p.line.reference not in refs[(location, normalize(p.part))]:
                refs[(location, normalize(p.part))].append(p.line.reference)
    picks = tuple(KitPick(loc, part, qty, tuple(refs[(loc, normalize(part))]))
                  for loc, part, qty in plan.pick_list())
    return KitSheet(job=(job or "").strip(), date=date or _date.today().isoformat(),
                    lines=lines, picks=picks)


def render(sheet: KitSheet, fmt: str) -> bytes:
    """The sheet as the bytes of a file of format ``fmt`` (md or pdf)."""
    if fmt == "md":
        return render_markdown(sheet).encode("utf-8")
    if fmt == "pdf":
        return render_pdf(sheet)
    raise InvalidInput(f"--format: {fmt!r} is not a kit-sheet format; expected md or pdf")


def sheet_format(path: str | Path, fmt: str | None = None) -> str:
    """``fmt``, or the format the file name asks for (.md, .pdf)."""
    kind = fmt or {".md": "md", ".pdf": "pdf"}.get(Path(path).suffix.lower())
    if kind not in FORMATS:
        raise InvalidInput(f"--output: {str(path)!r} is not valid; expected a name ending in "
                           ".md or .pdf")
    return kind


def write_kit_sheet(sheet: KitSheet, path: str | Path, fmt: str | None = None, *,
                    force: bool = False, protect: Iterable[Path] = (),
                    then: Callable[[], object] | None = None) -> Path:
    """Write the sheet through the one file writer; returns the absolute path written.

    ``then`` runs once the file's content is complete but before it is renamed into place:
    when it raises (a kit take refused), the file is not written."""
    from partsdb.services.files import atomic_path

    target = Path(path).expanduser()
    data = render(sheet, sheet_format(target, fmt))
    with atomic_path(target, force=force, protect=protect, what="kit sheet") as tmp:
        tmp.write_bytes(data)
        if then is not None:
            then()
    return target.resolve()


# ---------------------------------------------------------------- PDF

LINE_WIDTHS = (18, 34, 12, 24, 34, 28)
"""Millimetres of the lines table (186 mm: A4's 210 less 12 mm margins each side)."""
PICK_WIDTHS = (40, 34, 12, 80, 20)


def render_pdf(sheet: KitSheet) -> bytes:
    """A4 pages (fpdf2): the job and date at the top, the lines, the pick list by drawer,
    the lines to buy, the cautions and the sign-off fields. A long kit runs onto further
    pages; each table repeats its headings there and every page names the job and its
    number."""
    try:
        from fpdf import FPDF
        from fpdf.fonts import FontFace
    except ModuleNotFoundError as err:
        raise EnvironmentProblem("PDF output needs fpdf2: pip install 'partsdb-drawers[print]'"
                                 ) from err

    class Sheet(FPDF):  # type: ignore[misc]
        def footer(self) -> None:
            self.set_y(-9)
            self.set_font("Helvetica", "", 7.5)
            self.cell(0, 4, _latin(f"{sheet.title} · {sheet.date} · page {self.page_no()} "
                                   "of {nb}"), align="C")

    pdf = Sheet(unit="mm", format="A4")
    pdf.set_auto_page_break(True, margin=14)
    pdf.set_margins(12, 10, 12)
    pdf.set_creator("partsdb")
    pdf.set_title(_latin(sheet.title))
    pdf.add_page()
    width = pdf.epw
    bold = FontFace(emphasis="BOLD")

    def heading(text: str) -> None:
        pdf.ln(2)
        pdf.set_font("Helvetica", "B", 11)
        pdf.cell(width, 6, _latin(text), new_x="LMARGIN", new_y="NEXT")

    def para(text: str, size: float = 8.5) -> None:
        pdf.set_font("Helvetica", "", size)
        pdf.multi_cell(width, size * 0.45, _latin(text), new_x="LMARGIN", new_y="NEXT")

    pdf.set_font("Helvetica", "B", 15)
    pdf.cell(width, 8, _latin(f"Repair kit, job {sheet.job_text}"), new_x="LMARGIN",
             new_y="NEXT")
    pdf.set_font("Helvetica", "", 10)
    pdf.cell(width, 5.5, _latin(f"Date {sheet.date}   ·   {len(sheet.lines)} lines, "
                                f"{sheet.parts_to_pick} parts to pick"),
             new_x="LMARGIN", new_y="NEXT")
    heading("Lines")
    pdf.set_font("Helvetica", "", 8.5)
    with pdf.table(col_widths=LINE_WIDTHS, text_align="LEFT", line_height=4.6,
                   headings_style=bold) as table:
        table.row([_latin(t) for t in LINE_HEADINGS])
        for line in sheet.lines:
            table.row([_latin(t) for t in sheet.line_cells(line)])
    heading("Pick list (by drawer)")
    if sheet.picks:
        pdf.set_font("Helvetica", "", 8.5)
        with pdf.table(col_widths=PICK_WIDTHS, text_align="LEFT", line_height=5.5,
                       headings_style=bold) as table:
            table.row([_latin(t) for t in PICK_HEADINGS])
            for pick in sheet.picks:
                table.row([_latin(t) for t in sheet.pick_cells(pick)])
    else:
        para("Nothing to take from the drawers.")
    if sheet.to_buy:
        heading("To buy")
        para(sheet.buy_text(), 9)
    heading("Cautions")
    for caution in sheet.cautions:
        para("- " + caution, 7.5)
    heading("Sign-off")
    pdf.set_font("Helvetica", "", 9.5)
    for name in SIGN_FIELDS:
        if pdf.will_page_break(8):
            pdf.add_page()
        pdf.cell(30, 8, _latin(name + ":"))
        y = pdf.get_y() + 6
        pdf.line(pdf.l_margin + 30, y, pdf.l_margin + width, y)
        pdf.ln(8)
    return bytes(pdf.output())
