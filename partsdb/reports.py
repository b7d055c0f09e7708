"""Printable ranking reports of a substitution ranking, in Markdown and in HTML.

A ranking report is the record of a substitution search: what was required (and from where), the
circuit stress, the derating policy and its factors, the ranked substitutes with their flags,
the safety cautions, and blank lines for the job reference, date, technician and signature.
Pure: takes a :class:`partsdb.ranking.RankResult`, returns text. Every value placed in HTML goes
through :func:`html.escape`; Markdown table cells have their pipes and line breaks escaped.
"""

from __future__ import annotations

import html
from collections.abc import Iterable, Sequence
from typing import TYPE_CHECKING, Any

from partsdb.cautions import SAFETY_CAUTIONS
from partsdb.spec_fields import (
    FET_REQUIREMENT_NAMES,
    REQUIREMENT_FIELDS,
    STRESS_FIELDS,
    WINDOW_ENDS,
    shown_sink,
)
from partsdb.units import format_quantity

if TYPE_CHECKING:
    from partsdb.ranking import Candidate, Problem, RankResult

BLANK = "______________________"


def _value(value: Any, unit: str) -> str:
    if value is None:
        return "—"
    if isinstance(value, float | int) and not isinstance(value, bool):
        return format_quantity(float(value), unit) if unit else f"{value:g}"
    return str(value)


def _window(low: float | None, high: float | None) -> str:
    if low is None:
        return "—"
    return f"{low:g}..{high:g}" if high is not None else f"{low:g}"


def requirement_rows(result: RankResult) -> list[tuple[str, str]]:
    """(label, value) of each requirement field given, in table order."""
    req = result.requirement
    rows = []
    if hasattr(req, "original"):  # a field-effect original: its record's fields
        from partsdb.device import FIELD_BY_NAME

        for name in FET_REQUIREMENT_NAMES:
            spec = FIELD_BY_NAME.get(name)
            value = getattr(req.original, name, None)
            if isinstance(value, bool):
                value = "yes" if value else "no"
            rows.append((spec.label if spec else name, _value(value, spec.unit if spec else "")))
        return [(k, v) for k, v in rows if v != "—"]
    for f in REQUIREMENT_FIELDS:
        if f.name in WINDOW_ENDS:
            low, high = WINDOW_ENDS[f.name]
            rows.append((f.label, _window(getattr(req, low), getattr(req, high))))
        else:
            rows.append((f.label, _value(getattr(req, f.name), f.unit)))
    return [(k, v) for k, v in rows if v != "—"]


def stress_rows(result: RankResult) -> list[tuple[str, str]]:
    """(label, value) of each stress given (the ambient always), in table order."""
    s = result.stress
    return [(f.label, (f.kind == "sink" and shown_sink(getattr(s, f.name)))
             or _value(getattr(s, f.name), f.unit)) for f in STRESS_FIELDS
            if getattr(s, f.name) is not None]


def problem_line(problem: Problem) -> str:
    """One problem as a line: ``vceo marginal: <note>`` for a check, ``<code>: <message>`` for
    a flag."""
    if problem.is_flag:
        return f"{problem.parameter}: {problem.note}"
    return f"{problem.parameter} {problem.status}: {problem.note}"


def problem_lines(problems: tuple[Problem, ...] | list[Problem]) -> list[str]:
    return [problem_line(p) for p in problems]


def policy_line(result: RankResult) -> str:
    p = result.policy
    tj = f"Tj at least {p.tj_margin:g} K below Tj max"
    if p.tj_cap is not None:
        tj += f" and at most {p.tj_cap:g} °C"
    return (f"{p.name}: voltage {p.voltage:.0%}, current {p.current:.0%}, power {p.power:.0%} of "
            f"rating; {tj}. Source: {p.source}")


def source_text(result: RankResult) -> str:
    return {"stored": "the original's stored record (like-for-like)",
            "given": "a specification given on the command line",
            "mixed": "the original's stored record with given values"}[result.requirement.source]


def key_flags(candidate: Candidate) -> str:
    """The problems, short (for table cells): under-rated and marginal checks, checks without
    data, the fits that need work by their codes, then the flag codes."""
    problems = candidate.problems()
    checks = [p for p in problems if not p.is_flag]
    under = [p.parameter for p in checks if p.status == "under-rated"]
    marginal = [p.parameter for p in checks if p.status == "marginal" and not p.code]
    unknown = [p.parameter for p in checks if p.status == "unknown"]
    by_code: dict[str, list[str]] = {}
    for p in checks:
        if p.code:
            by_code.setdefault(p.code, []).append(p.parameter)
    # one entry per code; a code that can concern several ratings names them
    # ("below-original vceo,vcbo"); a fit's code names its own (re-form-leads: the pinout)
    codes = [code if params in (["pinout"], ["package"], ["material"]) else
             f"{code} {','.join(params)}" for code, params in by_code.items()]
    codes += [p.code for p in problems if p.is_flag]
    parts = []
    if under:
        parts.append("UNDER " + ",".join(under))
    if marginal:
        parts.append("tight " + ",".join(marginal))
    if unknown:
        parts.append("no data " + ",".join(unknown))
    parts += codes
    return "; ".join(parts) or "—"


def _title(result: RankResult) -> str:
    name = result.requirement.designation
    return f"Substitution ranking report: {name}" if name else "Substitution ranking report"


def render_markdown(result: RankResult, job: str | None = None, date: str | None = None,
                    technician: str | None = None) -> str:
    """The ranking report as Markdown."""
    out: list[str] = [f"# {_md(_title(result))}", ""]
    out += [f"Requirement from {source_text(result)}.", ""]
    out += ["| Parameter | Need |", "|---|---|"]
    out += [f"| {_md(k)} | {_md(v)} |" for k, v in requirement_rows(result)]
    out.append("")
    stress = stress_rows(result)
    if stress:
        out += ["## Circuit stress", "", "| Stress | Value |", "|---|---|"]
        out += [f"| {_md(k)} | {_md(v)} |" for k, v in stress]
        out.append("")
    out += ["## Derating policy", "", _md(policy_line(result)), ""]
    out += ["## Ranked substitutes", "",
            f"{result.compatible} compatible parts of {result.considered} in the catalog.", "",
            "| # | Designation | Score | Verdict | Confidence | In stock | Drawers | Key flags |",
            "|---|---|---|---|---|---|---|---|"]
    for n, c in enumerate(result.candidates, start=1):
        out.append(f"| {n} | {_md(c.designation)} | {c.score:.0f} | {c.verdict} | "
                   f"{c.confidence:.0%} | {c.in_stock} | {_md(', '.join(c.locations) or '—')} | "
                   f"{_md(key_flags(c))} |")
    if not result.candidates:
        out.append("| — | no candidate | | | | | | |")
    out.append("")
    details = [(c, c.problems()) for c in result.candidates]
    details = [(c, problems) for c, problems in details if problems]
    if details:
        out += ["## Flags and checks", ""]
        for c, problems in details:
            out.append(f"**{_md(c.designation)}** ({c.verdict}, score {c.score:.0f})")
            out.append("")
            out += [f"- {_md(line)}" for line in problem_lines(problems)]
            out.append("")
    out += ["## Safety", ""]
    out += [f"- {_md(text)}" for text in result.cautions or SAFETY_CAUTIONS]
    out += ["", "## Record", "",
            f"- Job reference: {_md(job) if job else BLANK}",
            f"- Date: {_md(date) if date else BLANK}",
            f"- Substitute fitted: {BLANK}",
            f"- Technician: {_md(technician) if technician else BLANK}",
            f"- Signature: {BLANK}", ""]
    return "\n".join(out)


def markdown_table(headers: Sequence[str], rows: Iterable[Sequence[object]]) -> str:
    """A Markdown table, every cell escaped; None shows as a dash."""
    out = ["| " + " | ".join(_md(h) for h in headers) + " |",
           "|" + "---|" * len(headers)]
    out += ["| " + " | ".join("—" if v is None else _md(str(v)) for v in row) + " |"
            for row in rows]
    return "\n".join(out)


def _md(text: str) -> str:
    """Text safe inside a Markdown table cell or line (pipes, backslashes, newlines, markup)."""
    text = str(text).replace("\\", "\\\\").replace("|", "\\|")
    for ch in ("*", "_", "`", "<", ">", "[", "]"):
        text = text.replace(ch, "\\" + ch)
    return " ".join(text.split())


_CSS = """
body { font-family: sans-serif; margin: 2em; color: #000; }
table { border-collapse: collapse; margin: 0.5em 0 1em; }
th, td { border: 1px solid #555; padding: 0.2em 0.5em; text-align: left; vertical-align: top; }
.verdict-under-rated, .verdict-incompatible { font-weight: bold; }
.record td { height: 2em; min-width: 16em; }
@media print { body { margin: 1cm; } }
"""


def render_html(result: RankResult, job: str | None = None, date: str | None = None,
                technician: str | None = None) -> str:
    """The ranking report as a standalone, printable HTML page (every value escaped)."""
    e = html.escape
    title = e(_title(result))
    parts = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
             f"<title>{title}</title>", f"<style>{_CSS}</style>", "</head>", "<body>",
             f"<h1>{title}</h1>", f"<p>Requirement from {e(source_text(result))}.</p>",
             "<table><tr><th>Parameter</th><th>Need</th></tr>"]
    parts += [f"<tr><td>{e(k)}</td><td>{e(v)}</td></tr>" for k, v in requirement_rows(result)]
    parts.append("</table>")
    stress = stress_rows(result)
    if stress:
        parts.append("<h2>Circuit stress</h2><table><tr><th>Stress</th><th>Value</th></tr>")
        parts += [f"<tr><td>{e(k)}</td><td>{e(v)}</td></tr>" for k, v in stress]
        parts.append("</table>")
    parts += ["<h2>Derating policy</h2>", f"<p>{e(policy_line(result))}</p>",
              "<h2>Ranked substitutes</h2>",
              f"<p>{result.compatible} compatible parts of {result.considered} in the catalog.</p>",
              "<table><tr><th>#</th><th>Designation</th><th>Score</th><th>Verdict</th>"
              "<th>Confidence</th><th>In stock</th><th>Drawers</th><th>Key flags</th></tr>"]
    for n, c in enumerate(result.candidates, start=1):
        parts.append(
            f'<tr class="verdict-{e(c.verdict)}"><td>{n}</td><td>{e(c.designation)}</td>'
            f"<td>{c.score:.0f}</td><td>{e(c.verdict)}</td><td>{c.confidence:.0%}</td>"
            f"<td>{c.in_stock}</td><td>{e(', '.join(c.locations) or '—')}</td>"
            f"<td>{e(key_flags(c))}</td></tr>")
    if not result.candidates:
        parts.append('<tr><td colspan="8">no candidate</td></tr>')
    parts.append("</table>")
    details = [(c, c.problems()) for c in result.candidates]
    details = [(c, problems) for c, problems in details if problems]
    if details:
        parts.append("<h2>Flags and checks</h2>")
        for c, problems in details:
            parts.append(f"<h3>{e(c.designation)} ({e(c.verdict)}, score {c.score:.0f})</h3><ul>")
            parts += [f"<li>{e(line)}</li>" for line in problem_lines(problems)]
            parts.append("</ul>")
    parts.append("<h2>Safety</h2><ul>")
    parts += [f"<li>{e(text)}</li>" for text in result.cautions or SAFETY_CAUTIONS]
    parts.append("</ul>")
    parts.append('<h2>Record</h2><table class="record">')
    for label, value in (("Job reference", job), ("Date", date), ("Substitute fitted", None),
                         ("Technician", technician), ("Signature", None)):
        parts.append(f"<tr><th>{e(label)}</th><td>{e(value) if value else ''}</td></tr>")
    parts += ["</table>", "</body>", "</html>", ""]
    return "\n".join(parts)
