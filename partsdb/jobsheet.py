"""The job sheet of one chosen substitute: one printable page for the bench.

Where :mod:`partsdb.reports` prints the whole ranking, a job sheet is about the pair chosen: the
original and the substitute side by side (need, offered and status of every check), the policy
and the assumptions (heat sink, ambient), the drawers to take it from, the lead re-forming as
text and as a drawing, the resistor change and predicted operating point of a given stage, the
safety cautions, and blank fields for the outcome, technician and date.

Pure: :func:`build_sheet` turns a ranking candidate into a :class:`JobSheet`; the Markdown and
HTML renderers and :func:`lead_drawing` (geometry shared by the SVG and the PDF) live here too.
"""

from __future__ import annotations

import html
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from partsdb.cautions import SAFETY_CAUTIONS
from partsdb.ranking.model import LABEL
from partsdb.reports import policy_line
from partsdb.spec_fields import stresses_for
from partsdb.units import format_quantity

if TYPE_CHECKING:
    from partsdb.bias import BiasReport
    from partsdb.ranking import Candidate, RankResult

BLANK = "______________________"
LEAD_NAMES = {"E": "emitter", "B": "base", "C": "collector"}


@dataclass(frozen=True)
class SheetRow:
    """One check of the substitute against the original's need."""

    parameter: str
    need: str
    offered: str
    status: str
    note: str


@dataclass(frozen=True)
class JobSheet:
    """Everything one job sheet shows, as text (renderers only place it)."""

    job: str
    date: str
    original: str
    substitute: str
    verdict: str
    score: float
    policy: str
    assumptions: tuple[tuple[str, str], ...]
    rows: tuple[SheetRow, ...]
    flags: tuple[str, ...]
    """Facts no check covers, each once (a check's own note is not repeated here)."""
    drawers: tuple[tuple[str, int], ...]
    leads: tuple[str, str] | None
    """(original lead order, substitute lead order) when they differ, e.g. ("EBC", "ECB")."""
    stage: tuple[str, ...] = ()
    """The stage lines (resistor change, predicted operating point) when a stage was given."""
    cautions: tuple[str, ...] = SAFETY_CAUTIONS

    @property
    def title(self) -> str:
        return f"Job sheet {self.job}: {self.original} -> {self.substitute}"

    def lead_text(self) -> str:
        """The re-forming as one sentence (or that none is needed)."""
        if self.leads is None:
            return "Same lead order: fit as the original, no re-forming."
        original, substitute = self.leads
        moves = [f"pad {pad} ({LEAD_NAMES.get(fn, fn)}) takes substitute lead "
                 f"{substitute.index(fn) + 1}" for pad, fn in enumerate(original, start=1)]
        return (f"Re-form the leads: the board's pads 1 2 3 are {' '.join(original)}; the "
                f"substitute's leads 1 2 3 are {' '.join(substitute)}. " + "; ".join(moves)
                + ".")


_LABELS = {"vceo": "Vceo", "vcbo": "Vcbo", "ic_max": "Ic max", "ptot": "Ptot",
           "tj_max": "Tj max", "hfe": "hFE", "ft": "fT", "package": "Outline",
           "pinout": "Lead order", "material": "Material", "polarity": "Polarity",
           "kind": "Kind"}


def _label(parameter: str) -> str:
    return LABEL.get(parameter) or _LABELS.get(parameter, parameter)


def _assumptions(result: RankResult) -> tuple[tuple[str, str], ...]:
    s = result.stress
    rows = []
    for row in stresses_for(result.requirement.kind):
        value = getattr(s, row.name)
        if value is None:
            rows.append((row.label, "not given" if row.name != "heatsink" else
                         "none assumed (free air)"))
        elif row.kind == "temperature":
            rows.append((row.label, f"{value:g} °C"))
        else:
            rows.append((row.label, format_quantity(float(value), row.unit)))
    return tuple(rows)


def stage_lines(report: BiasReport) -> tuple[str, ...]:
    """The stage's predicted operating point with each device and the resistor change."""
    s = report.stage
    parts = [f"Vcc {format_quantity(s.vcc, 'V')}"] + [
        f"{n.upper()} {format_quantity(getattr(s, n), 'Ω')}"
        for n in ("r1", "r2", "rb", "rc", "re") if getattr(s, n) is not None]
    lines = [f"Stage: {s.network}, " + ", ".join(parts) + "."]
    for which, r in (("original", report.original), ("substitute", report.substitute)):
        if r is None:
            continue
        p = r.point
        lines.append(f"Predicted with the {which} {r.device}: Ic {format_quantity(p.ic, 'A')}, "
                     f"Vce {format_quantity(p.vce, 'V')}, dissipation "
                     f"{format_quantity(p.power, 'W')} ({p.region}).")
    if report.ic_change is not None and report.vce_change is not None:
        lines.append(f"Shift on swapping: Ic {report.ic_change:+.1%}, "
                     f"Vce {report.vce_change:+.2f} V.")
    if report.fix is not None:
        f = report.fix
        lines.append(f"Change {f.resistor.upper()} from {format_quantity(f.original_value, 'Ω')} "
                     f"to {format_quantity(f.e12.value, 'Ω')} (E12; exact "
                     f"{format_quantity(f.exact, 'Ω')}): then Ic {format_quantity(f.e12.ic, 'A')}, "
                     f"Vce {format_quantity(f.e12.vce, 'V')} ({f.e12.region}).")
    elif report.substitute is not None:
        lines.append("No resistor change computed.")
    lines += list(report.notes)
    return tuple(lines)


def build_sheet(result: RankResult, candidate: Candidate, *, job: str, date: str,
                drawers: tuple[tuple[str, int], ...] = (),
                stage: BiasReport | None = None) -> JobSheet:
    """The job sheet of ``candidate`` (one of ``result``'s) for job ``job`` on ``date``."""
    rows = []
    notes_shown: set[str] = set()
    for check in candidate.checks:
        need, offered = candidate.shown.get(check.parameter, ("—", "—"))
        rows.append(SheetRow(_label(check.parameter), need or "—", offered or "—", check.status,
                             check.note))
        notes_shown.add(check.note)
    flags: list[str] = []
    for flag in candidate.flags:
        if flag.message not in notes_shown and flag.message not in flags:
            flags.append(flag.message)
    leads = None
    pin = next((c for c in candidate.checks if c.parameter == "pinout"), None)
    if pin is not None and pin.status != "ok":
        need, offered = candidate.shown.get("pinout", ("", ""))
        # three distinct leads, the same letters (E/B/C, or G/D/S for a FET)
        if (need and offered and sorted(need) == sorted(offered)
                and sorted(need) in (["B", "C", "E"], ["D", "G", "S"]) and need != offered):
            leads = (need, offered)
    return JobSheet(job=job, date=date,
                    original=result.requirement.designation or "the specification",
                    substitute=candidate.designation, verdict=candidate.verdict,
                    score=candidate.score, policy=policy_line(result),
                    assumptions=_assumptions(result), rows=tuple(rows), flags=tuple(flags),
                    drawers=drawers, leads=leads,
                    stage=stage_lines(stage) if stage is not None else (),
                    cautions=tuple(result.cautions or SAFETY_CAUTIONS))


# ---------------------------------------------------------------- the lead drawing

@dataclass(frozen=True)
class Drawing:
    """Lines and labels in a box ``width`` x ``height`` (mm), y downwards."""

    width: float
    height: float
    lines: tuple[tuple[float, float, float, float], ...] = ()
    labels: tuple[tuple[float, float, str], ...] = ()
    dots: tuple[tuple[float, float], ...] = field(default_factory=tuple)


def lead_drawing(original: str, substitute: str, width: float = 60.0,
                 height: float = 26.0) -> Drawing:
    """The board's pads (top row, the original's order) joined to the substitute's leads
    (bottom row) by the lead that goes there; crossing lines are the leads to re-form."""
    step = width / 3
    xs = [step * (i + 0.5) for i in range(3)]
    top, bottom = 7.0, height - 7.0
    lines = []
    labels = [(width + 2.0, top + 1.0, "board pads")]
    dots = []
    for pad, fn in enumerate(original):
        lead = substitute.index(fn)
        lines.append((xs[lead], bottom, xs[pad], top))
        labels.append((xs[pad] - 2.5, top - 1.5, f"{pad + 1} {fn}"))
        dots.append((xs[pad], top))
    for i, fn in enumerate(substitute):
        labels.append((xs[i] - 2.5, bottom + 4.5, f"{i + 1} {fn}"))
        dots.append((xs[i], bottom))
    labels.append((width + 2.0, bottom + 1.0, "substitute leads"))
    return Drawing(width + 26.0, height, tuple(lines), tuple(labels), tuple(dots))


def lead_ascii(original: str, substitute: str) -> list[str]:
    """The same drawing as text: each pad with the lead that goes to it."""
    out = ["board pad  <-  substitute lead"]
    for pad, fn in enumerate(original, start=1):
        lead = substitute.index(fn) + 1
        mark = "" if lead == pad else "   (re-form)"
        out.append(f"  {pad} ({fn})  <-------  {lead} ({fn}){mark}")
    return out


def lead_svg(original: str, substitute: str) -> str:
    d = lead_drawing(original, substitute)
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{d.width * 4:g}" '
           f'height="{d.height * 4:g}" viewBox="0 0 {d.width:g} {d.height:g}" role="img" '
           'aria-label="lead re-forming">']
    out += [f'<line x1="{x1:.2f}" y1="{y1:.2f}" x2="{x2:.2f}" y2="{y2:.2f}" stroke="black" '
            'stroke-width="0.5"/>' for x1, y1, x2, y2 in d.lines]
    out += [f'<circle cx="{x:.2f}" cy="{y:.2f}" r="1" fill="black"/>' for x, y in d.dots]
    out += [f'<text x="{x:.2f}" y="{y:.2f}" font-size="3" font-family="sans-serif">'
            f'{html.escape(text)}</text>' for x, y, text in d.labels]
    out.append("</svg>")
    return "\n".join(out)


# ---------------------------------------------------------------- Markdown and HTML

def _md(text: Any) -> str:
    """Text for a Markdown table cell: only the pipe needs escaping there; no other escapes,
    so the printed sheet reads as written (``->`` stays ``->``)."""
    return " ".join(str(text).replace("|", "/").split())


OUTCOME_FIELDS = ("Outcome (worked / failed)", "Notes", "Technician", "Date")


def render_markdown(sheet: JobSheet) -> str:
    out = [f"# {_md(sheet.title)}", "",
           f"Job: **{_md(sheet.job)}** · Date: {_md(sheet.date)}", "",
           f"Substitute **{_md(sheet.substitute)}** for **{_md(sheet.original)}**: "
           f"{sheet.verdict}, score {sheet.score:.0f}.", "",
           f"| Check | {_md(sheet.original)} needs | {_md(sheet.substitute)} offers | Status | "
           "Note |", "|---|---|---|---|---|"]
    out += [f"| {_md(r.parameter)} | {_md(r.need)} | {_md(r.offered)} | {r.status} | "
            f"{_md(r.note)} |" for r in sheet.rows]
    out += ["", f"Policy: {_md(sheet.policy)}", "",
            "Assumptions: " + "; ".join(f"{k} {v}" for k, v in sheet.assumptions) + ".", ""]
    if sheet.flags:
        out += ["Also note:", ""] + [f"- {_md(f)}" for f in sheet.flags] + [""]
    out += ["## Take from", ""]
    out += ([f"- {_md(loc)}: {qty} in the drawer" for loc, qty in sheet.drawers]
            or ["- none in the drawers: order it"])
    out += ["", "## Leads", "", sheet.lead_text(), ""]
    if sheet.leads is not None:
        out += ["```", *lead_ascii(*sheet.leads), "```", ""]
    if sheet.stage:
        out += ["## Stage", ""] + [f"- {_md(line)}" for line in sheet.stage] + [""]
    out += ["## Cautions", ""] + [f"- {_md(c)}" for c in sheet.cautions] + [""]
    out += ["## Outcome", ""] + [f"- {name}: {BLANK}" for name in OUTCOME_FIELDS] + [""]
    return "\n".join(out)


_CSS = """
body { font-family: sans-serif; margin: 1.5em; color: #000; font-size: 11pt; }
table { border-collapse: collapse; margin: 0.4em 0 0.8em; }
th, td { border: 1px solid #555; padding: 0.15em 0.4em; text-align: left; vertical-align: top; }
.status-under-rated, .status-unknown { font-weight: bold; }
.outcome td { height: 1.8em; min-width: 18em; }
@media print { body { margin: 1cm; } }
"""


def render_html(sheet: JobSheet) -> str:
    e = html.escape
    parts = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
             f"<title>{e(sheet.title)}</title>", f"<style>{_CSS}</style>", "</head>", "<body>",
             f"<h1>{e(sheet.title)}</h1>",
             f"<p>Job: <strong>{e(sheet.job)}</strong> · Date: {e(sheet.date)}</p>",
             f"<p>Substitute <strong>{e(sheet.substitute)}</strong> for "
             f"<strong>{e(sheet.original)}</strong>: {e(sheet.verdict)}, score "
             f"{sheet.score:.0f}.</p>",
             f"<table><tr><th>Check</th><th>{e(sheet.original)} needs</th>"
             f"<th>{e(sheet.substitute)} offers</th><th>Status</th><th>Note</th></tr>"]
    parts += [f'<tr class="status-{e(r.status)}"><td>{e(r.parameter)}</td><td>{e(r.need)}</td>'
              f"<td>{e(r.offered)}</td><td>{e(r.status)}</td><td>{e(r.note)}</td></tr>"
              for r in sheet.rows]
    parts += ["</table>", f"<p>Policy: {e(sheet.policy)}</p>",
              "<p>Assumptions: " + e("; ".join(f"{k} {v}" for k, v in sheet.assumptions))
              + ".</p>"]
    if sheet.flags:
        parts += ["<p>Also note:</p><ul>"] + [f"<li>{e(f)}</li>" for f in sheet.flags]
        parts.append("</ul>")
    parts.append("<h2>Take from</h2><ul>")
    parts += ([f"<li>{e(loc)}: {qty} in the drawer</li>" for loc, qty in sheet.drawers]
              or ["<li>none in the drawers: order it</li>"])
    parts += ["</ul>", "<h2>Leads</h2>", f"<p>{e(sheet.lead_text())}</p>"]
    if sheet.leads is not None:
        parts.append(lead_svg(*sheet.leads))
    if sheet.stage:
        parts.append("<h2>Stage</h2><ul>")
        parts += [f"<li>{e(line)}</li>" for line in sheet.stage]
        parts.append("</ul>")
    parts.append("<h2>Cautions</h2><ul>")
    parts += [f"<li>{e(c)}</li>" for c in sheet.cautions]
    parts += ["</ul>", '<h2>Outcome</h2><table class="outcome">']
    parts += [f"<tr><th>{e(name)}</th><td></td></tr>" for name in OUTCOME_FIELDS]
    parts += ["</table>", "</body>", "</html>", ""]
    return "\n".join(parts)
