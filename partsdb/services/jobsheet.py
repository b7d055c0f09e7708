"""Job sheets from the database: the pick ranked, its drawers, a stage, and the file written.

:func:`make_job_sheet` ranks the original, finds the picked candidate, reads its drawers from
the stock service and, when a stage is given (:func:`parse_stage`: the ``bias`` options as one
line), predicts the swap with :func:`partsdb.bias.analyse_bias`. :func:`write_job_sheet` writes
Markdown, HTML or PDF (fpdf2, the ``print`` extra) through the one file writer.
"""

from __future__ import annotations

import shlex
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from datetime import date as _date
from pathlib import Path
from typing import Any

from partsdb.bias import BiasError, Stage, analyse_bias, params_from_device
from partsdb.designations import normalize
from partsdb.errors import EnvironmentProblem, InvalidInput, NotFoundError
from partsdb.jobsheet import (
    OUTCOME_FIELDS,
    JobSheet,
    build_sheet,
    lead_drawing,
    render_html,
    render_markdown,
)
from partsdb.ranking import SpecError, Stress
from partsdb.storage.database import Database

FORMATS = ("md", "html", "pdf")


class PickNotRanked(NotFoundError):
    """The picked part is not among the candidates for the original."""


@dataclass(frozen=True)
class StageSpec:
    """A stage given as the ``bias`` command's options."""

    stage: Stage
    ambient: float = 25.0
    model: str = "auto"


_STAGE_UNITS = {"--vcc": "V", "--r1": "Ω", "--r2": "Ω", "--rb": "Ω", "--rc": "Ω", "--re": "Ω"}


def parse_stage(text: str) -> StageSpec:
    """A stage from the ``bias`` options as one line: ``divider --vcc 9V --r1 47k --r2 10k
    --rc 2k2 --re 470`` (also ``--ambient``, ``--model``). The devices are the original and
    the pick, so ``--device`` and ``--substitute`` are not taken here."""
    from partsdb.bias import NETWORKS
    from partsdb.units import UnitError, parse_quantity, parse_temperature

    try:
        words = shlex.split(text)
    except ValueError as err:
        raise InvalidInput(f"--stage: {text!r} is not valid ({err}); expected e.g. "
                           "'divider --vcc 9V --r1 47k --r2 10k --rc 2k2 --re 470'") from err
    if not words or words[0] not in NETWORKS:
        raise InvalidInput(f"--stage: {text!r} does not start with a network; expected one of "
                           + ", ".join(NETWORKS))
    network, values = words[0], {}
    ambient, model = 25.0, "auto"
    rest = words[1:]
    if len(rest) % 2:
        raise InvalidInput(f"--stage: {rest[-1]!r} has no value; expected option value pairs")
    for option, value in zip(rest[::2], rest[1::2], strict=True):
        try:
            if option in _STAGE_UNITS:
                values[option[2:]] = parse_quantity(value, _STAGE_UNITS[option], option[2:])
            elif option == "--ambient":
                ambient = parse_temperature(value, "ambient")
            elif option == "--model" and value in ("auto", "fixed-vbe", "exponential"):
                model = value
            else:
                raise InvalidInput(f"--stage: {option} {value!r} is not valid; expected "
                                   + ", ".join(_STAGE_UNITS) + ", --ambient or --model")
        except UnitError as err:
            raise InvalidInput(f"--stage: {err}") from err
    if "vcc" not in values or "rc" not in values:
        raise InvalidInput(f"--stage: {text!r} lacks --vcc or --rc; expected both")
    if network != "divider":
        values.setdefault("re", 0.0)
    try:
        stage = Stage(network=network, vcc=abs(values.pop("vcc")), rc=values.pop("rc"),
                      re=values.pop("re", None), **values)
    except BiasError as err:
        raise InvalidInput(f"--stage: {err}") from err
    return StageSpec(stage, ambient, model)


def make_job_sheet(db: Database, original: str, pick: str, *, job: str,
                   spec: Mapping[str, Any] | None = None, stress: Stress | None = None,
                   policy: str | None = None, stage: StageSpec | str | None = None,
                   date: str | None = None) -> JobSheet:
    """The job sheet for fitting ``pick`` in place of ``original`` in job ``job``."""
    from partsdb.services import catalog, stock
    from partsdb.services.substitution import rank_substitutes

    if not job or not job.strip():
        raise InvalidInput("--job: empty; expected the job reference (such as J-2611)")
    if isinstance(stage, str):
        stage = parse_stage(stage)
    try:
        result = rank_substitutes(db, original, spec or {}, stress, policy, limit=100_000,
                                  show_rejected=True)
    except SpecError as err:
        raise InvalidInput(str(err)) from err
    key = normalize(pick)
    candidate = next((c for c in result.candidates if c.key == key), None)
    if candidate is None:
        raise PickNotRanked(f"--pick: {pick!r} is not a stored candidate for {original}; "
                            "expected a part listed by 'partsdb substitute " + original + "'")
    with db.session() as session:
        lots = [lot for lot in stock.where(session, candidate.designation) if lot.quantity > 0]
        drawers = tuple((lot.location, lot.quantity) for lot in lots)
        report = None
        if stage is not None:
            orig_dev = catalog.get_device(session, original)
            sub_dev = catalog.get_device(session, candidate.designation)
            if orig_dev is None or sub_dev is None:
                raise InvalidInput("--stage: needs a stored original to predict the swap")
            try:
                report = analyse_bias(stage.stage, params_from_device(orig_dev),
                                      params_from_device(sub_dev), model=stage.model,
                                      ambient=stage.ambient)
            except BiasError as err:
                raise InvalidInput(f"--stage: {err}") from err
    return build_sheet(result, candidate, job=job.strip(),
                       date=date or _date.today().isoformat(), drawers=drawers, stage=report)


def render(sheet: JobSheet, fmt: str) -> bytes:
    """The sheet as the bytes of a file of format ``fmt`` (md, html or pdf)."""
    if fmt == "md":
        return render_markdown(sheet).encode("utf-8")
    if fmt == "html":
        return render_html(sheet).encode("utf-8")
    if fmt == "pdf":
        return render_pdf(sheet)
    raise InvalidInput(f"--format: {fmt!r} is not valid; expected md, html or pdf")


def write_job_sheet(sheet: JobSheet, path: str | Path, fmt: str | None = None, *,
                    force: bool = False, protect: Iterable[Path] = ()) -> Path:
    """Write the sheet through the one file writer; returns the absolute path written."""
    from partsdb.services.files import atomic_path

    target = Path(path).expanduser()
    kind = fmt or {".md": "md", ".html": "html", ".htm": "html",
                   ".pdf": "pdf"}.get(target.suffix.lower())
    if kind not in FORMATS:
        raise InvalidInput(f"--output: {str(path)!r} is not valid; expected a name ending in "
                           ".md, .html or .pdf")
    data = render(sheet, kind)
    with atomic_path(target, force=force, protect=protect, what="job sheet") as tmp:
        tmp.write_bytes(data)
    return target.resolve()


# ---------------------------------------------------------------- PDF

def _latin(text: str) -> str:
    """PDF core fonts speak cp1252; a few signs are spelled out first."""
    for a, b in ((" Ω", " ohm"), ("Ω", " ohm"), ("µ", "u"), ("→", "->"), ("—", "-"), ("≤", "<="),
                 ("≥", ">=")):
        text = text.replace(a, b)
    return text.encode("cp1252", "replace").decode("cp1252")


def render_pdf(sheet: JobSheet) -> bytes:
    """One A4 page (fpdf2): header, the checks side by side, drawers, leads (vector lines),
    stage, cautions and the outcome fields."""
    try:
        from fpdf import FPDF
        from fpdf.fonts import FontFace
    except ModuleNotFoundError as err:
        raise EnvironmentProblem("PDF output needs fpdf2: pip install 'partsdb-drawers[print]'"
                                 ) from err
    pdf = FPDF(unit="mm", format="A4")
    pdf.set_auto_page_break(True, margin=10)
    pdf.set_margins(12, 10, 12)
    pdf.set_creator("partsdb")
    pdf.set_title(_latin(sheet.title))
    pdf.add_page()
    width = pdf.epw

    def heading(text: str) -> None:
        pdf.ln(1.5)
        pdf.set_font("Helvetica", "B", 10.5)
        pdf.cell(width, 5.5, _latin(text), new_x="LMARGIN", new_y="NEXT")

    def para(text: str, size: float = 8.5) -> None:
        pdf.set_font("Helvetica", "", size)
        pdf.multi_cell(width, size * 0.45, _latin(text), new_x="LMARGIN", new_y="NEXT")

    pdf.set_font("Helvetica", "B", 14)
    pdf.cell(width, 7, _latin(f"Job {sheet.job}"), new_x="LMARGIN", new_y="NEXT")
    pdf.set_font("Helvetica", "", 10)
    pdf.cell(width, 5, _latin(f"Date {sheet.date}   ·   substitute {sheet.substitute} for "
                              f"{sheet.original}: {sheet.verdict}, score {sheet.score:.0f}"),
             new_x="LMARGIN", new_y="NEXT")
    pdf.ln(1)
    pdf.set_font("Helvetica", "", 7.5)
    with pdf.table(col_widths=(16, 22, 22, 16, 110), text_align="LEFT", line_height=3.4,
                   headings_style=FontFace(emphasis="BOLD")) as table:
        table.row([_latin(t) for t in ("Check", f"{sheet.original} needs",
                                        f"{sheet.substitute} offers", "Status", "Note")])
        for r in sheet.rows:
            table.row([_latin(t) for t in (r.parameter, r.need, r.offered, r.status, r.note)])
    para("Policy: " + sheet.policy, 7.5)
    para("Assumptions: " + "; ".join(f"{k} {v}" for k, v in sheet.assumptions) + ".", 7.5)
    for flag in sheet.flags:
        para("Note: " + flag, 7.5)
    heading("Take from")
    para("; ".join(f"{loc}: {qty} in the drawer" for loc, qty in sheet.drawers)
         or "none in the drawers: order it")
    heading("Leads")
    para(sheet.lead_text())
    if sheet.leads is not None:
        d = lead_drawing(*sheet.leads)
        x0, y0 = pdf.l_margin, pdf.get_y() + 1
        pdf.set_line_width(0.4)
        for x1, y1, x2, y2 in d.lines:
            pdf.line(x0 + x1, y0 + y1, x0 + x2, y0 + y2)
        pdf.set_fill_color(0, 0, 0)
        for x, y in d.dots:
            pdf.circle(x=x0 + x, y=y0 + y, radius=0.8, style="F")
        pdf.set_font("Helvetica", "", 7.5)
        for x, y, text in d.labels:
            pdf.text(x0 + x, y0 + y, _latin(text))
        pdf.set_y(y0 + d.height + 1)
    if sheet.stage:
        heading("Stage")
        for line in sheet.stage:
            para(line)
    heading("Cautions")
    for caution in sheet.cautions:
        para("- " + caution, 7.5)
    heading("Outcome")
    pdf.set_font("Helvetica", "", 9)
    for name in OUTCOME_FIELDS:
        pdf.cell(45, 7, _latin(name + ":"))
        y = pdf.get_y() + 5.5
        pdf.line(pdf.l_margin + 45, y, pdf.l_margin + width, y)
        pdf.ln(7)
    return bytes(pdf.output())
