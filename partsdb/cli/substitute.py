"""CLI: ``substitute`` (rank substitutes), the ``swaplog`` group and ``policies``.

Thin: options become a spec and a stress, one service call ranks, the result is formatted.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click

from partsdb.cli.common import (
    CliState,
    QuantityParam,
    RangeParam,
    TemperatureParam,
    emit_json,
    fail,
    format_option,
    pass_state,
    print_table,
)
from partsdb.spec_fields import (
    REQUIREMENT_FIELDS,
    STRESS_FIELDS,
    WINDOW_ENDS,
    SpecField,
    read_sink,
    shown_sink,
)


class SinkParam(click.ParamType):
    """``--heatsink``: sink-to-ambient K/W or ``free-air`` (:func:`spec_fields.read_sink`)."""

    name = "K/W|free-air"

    def __init__(self, field: str) -> None:
        self.field = field

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None
                ) -> float:
        from partsdb.units import UnitError

        if isinstance(value, float):
            return value
        try:
            return read_sink(str(value), self.field)
        except UnitError as err:
            self.fail(str(err), param, ctx)


def _option(row: SpecField) -> Any:
    """The click option of one requirement or stress row (its name is the row's name)."""
    if row.kind == "choice":
        kind: Any = click.Choice(list(row.choices))
    elif row.kind == "window":
        kind = RangeParam(row.unit, row.name)
    elif row.kind == "temperature":
        kind = TemperatureParam(row.name)
    elif row.kind == "sink":
        kind = SinkParam(row.name)
    elif row.kind == "quantity":
        kind = QuantityParam(row.unit, row.name, positive=row.positive)
    else:
        kind = str
    return click.option(row.option, row.name, type=kind, default=None, help=row.help)


def _options(rows: tuple[SpecField, ...]) -> Any:
    def decorate(func: Any) -> Any:
        for row in reversed(rows):
            func = _option(row)(func)
        return func

    return decorate


_stress_options = _options(STRESS_FIELDS)
"""Circuit-stress options shared by ``substitute`` and ``swaplog add``."""


def _stress(values: dict[str, Any]) -> Any:
    """The Stress of the stress options in ``values`` (removed from it)."""
    from partsdb.ranking import SpecError, Stress

    given = {row.name: values.pop(row.name) for row in STRESS_FIELDS}
    try:
        return Stress.from_values(given)
    except SpecError as err:
        fail(str(err))


def _spec(values: dict[str, Any]) -> dict[str, Any]:
    """The requirement options in ``values`` (removed from it) as spec fields (windows split)."""
    spec: dict[str, Any] = {}
    for row in REQUIREMENT_FIELDS:
        value = values.pop(row.name)
        if row.name in WINDOW_ENDS:
            low, high = WINDOW_ENDS[row.name]
            spec[low], spec[high] = value if value else (None, None)
        else:
            spec[row.name] = value
    return spec


_STRESS_NAMES = ", ".join(row.option for row in STRESS_FIELDS)


@click.command()
@click.argument("designation", required=False)
@_options(REQUIREMENT_FIELDS)
@_stress_options
@click.option("--policy", "policy_name", default=None, metavar="NAME",
              help="Derating policy (see 'partsdb policies'; default workshop).")
@click.option("--show-rejected", is_flag=True,
              help="Also list parts of the wrong polarity or kind, marked incompatible.")
@click.option("--in-stock", is_flag=True, help="Only parts in the drawers.")
@click.option("--limit", type=click.IntRange(min=1), default=15, show_default=True,
              help="How many substitutes to list.")
@format_option("table", "json", "md", "html", "pdf")
@click.option("--output", type=click.Path(dir_okay=False, path_type=Path), default=None,
              help="Write the md/html ranking report (or, with --pick, the md/html/pdf job "
                   "sheet) to this file instead of the screen.")
@click.option("--job", default=None, help="Job reference to print on the report or job sheet.")
@click.option("--pick", default=None, metavar="CANDIDATE",
              help="The substitute chosen: print its one-page job sheet (needs --job).")
@click.option("--stage", "stage_text", default=None, metavar="OPTIONS",
              help="With --pick: the stage as the bias options, e.g. \"divider --vcc 9V "
                   "--r1 47k --r2 10k --rc 2k2 --re 470\": the sheet gets the predicted "
                   "operating point and resistor change.")
@click.option("--force", is_flag=True, help="Replace the --output file if it exists.")
@pass_state
def substitute(state: CliState, designation: str | None, policy_name: str | None,
               show_rejected: bool, in_stock: bool, limit: int, fmt: str, output: Path | None,
               job: str | None, pick: str | None, stage_text: str | None, force: bool,
               **values: Any) -> None:
    """Rank substitutes for DESIGNATION (its stored record is the requirement) or for a spec.

    Give circuit stress ({stress}) to judge
    candidates against what the circuit does rather than the original's ratings; the derating
    policy sets the margin. Parts in the drawers, and parts that worked before for the same
    original (swaplog), rank higher.
    """
    from partsdb.ranking import SpecError
    from partsdb.services.substitution import rank_substitutes

    spec = _spec(values)
    stress = _stress(values)
    if pick is not None or stage_text is not None:
        _job_sheet(state, designation, pick, job, stage_text, spec, stress, policy_name, fmt,
                   output, force)
        return
    if fmt == "pdf":
        fail("--format: pdf is for a job sheet; give --pick CANDIDATE --job REF (the ranking "
             "report is md or html)")
    if output is not None and fmt not in ("md", "html"):
        fail(f"--output: writes md or html ranking reports; use --format md or --format html "
             f"(got {fmt})")
    try:
        result = rank_substitutes(state.database(), designation, spec, stress, policy_name,
                                  limit=limit, in_stock_only=in_stock,
                                  show_rejected=show_rejected)
    except SpecError as err:
        fail(str(err))
    if fmt == "json":
        emit_json(result.to_json())
        return
    if fmt in ("md", "html"):
        if output is None:
            from datetime import date

            from partsdb.reports import render_html, render_markdown

            render = render_markdown if fmt == "md" else render_html
            click.echo(render(result, job=job, date=date.today().isoformat()))
        else:
            from partsdb.services.files import protected_files
            from partsdb.services.substitution import write_report

            written = write_report(result, output, job=job, fmt=fmt, force=force,
                                   protect=protected_files(state.database()))
            click.echo(f"ranking report written to {written}", err=True)
        return
    _print_result(result)


substitute.help = (substitute.help or "").replace("{stress}", _STRESS_NAMES)


def _job_sheet(state: CliState, designation: str | None, pick: str | None, job: str | None,
               stage_text: str | None, spec: dict[str, Any], stress: Any,
               policy_name: str | None, fmt: str, output: Path | None, force: bool) -> None:
    """``--pick``: the one-page job sheet of the chosen substitute (service-built)."""
    from partsdb.services import jobsheet

    if pick is None:
        fail("--stage: only with --pick CANDIDATE (the job sheet of the part chosen)")
    if designation is None:
        fail("--pick: needs the ORIGINAL designation the pick replaces")
    if job is None:
        fail("--job: missing; a job sheet needs the job reference (such as J-2611)")
    if fmt == "table":
        fmt = "md"
    if fmt not in jobsheet.FORMATS:
        fail(f"--format: {fmt} is not a job-sheet format; expected md, html or pdf")
    if fmt == "pdf" and output is None:
        fail("--output: a pdf job sheet needs a file name, e.g. --output job.pdf")
    sheet = jobsheet.make_job_sheet(state.database(), designation, pick, job=job, spec=spec,
                                    stress=stress, policy=policy_name, stage=stage_text)
    if sheet.verdict == "under-rated":
        # on stderr, so a sheet sent to stdout stays clean; the sheet itself states the verdict
        click.echo(f"warning: {pick} is under-rated for {designation}; the job sheet says so "
                   "(its under-rated rows give the reasons, its policy line the rule)", err=True)
    if output is None:
        click.echo(jobsheet.render(sheet, fmt).decode("utf-8"), nl=False)
        return
    from partsdb.services.files import protected_files

    written = jobsheet.write_job_sheet(sheet, output, fmt, force=force,
                                       protect=protected_files(state.database()))
    click.echo(f"job sheet written to {written}")


def _print_result(result: Any) -> None:
    from partsdb.ranking import ORDER_TEXT
    from partsdb.reports import (
        key_flags,
        policy_line,
        problem_lines,
        requirement_rows,
        source_text,
        stress_rows,
    )

    req = result.requirement
    title = f"Substitutes for {req.designation}" if req.designation else "Substitutes"
    click.echo(f"{title} — requirement from {source_text(result)}:")
    click.echo("  " + ", ".join(f"{k} {v}" for k, v in requirement_rows(result)))
    stress = stress_rows(result)
    if stress:
        click.echo("  circuit: " + ", ".join(f"{k} {v}" for k, v in stress))
    click.echo(f"  policy {policy_line(result)}")
    click.echo(f"  order: {ORDER_TEXT}")
    rows = [(n, c.designation, f"{c.score:.0f}", c.verdict, f"{c.confidence:.0%}", c.in_stock,
             ", ".join(c.locations) or "—", c.why() or "—", key_flags(c))
            for n, c in enumerate(result.candidates, start=1)]
    print_table(None, ("#", "Designation", "Score", "Verdict", "Known", "Stock", "Drawers",
                       "Score: top gains / losses", "Key flags"), rows,
                caption=f"{result.compatible} compatible of {result.considered} in the catalog")
    if not result.candidates:
        click.echo("No candidate: nothing of this polarity and kind"
                   + (" in the drawers" if result.compatible == 0 else "") + ".")
    for c in result.candidates[:3]:
        problems = c.problems()
        if problems:
            click.echo(f"{c.designation}:")
            for line in problem_lines(problems):
                click.echo(f"  - {line}")
    for note in result.notes:
        click.echo(f"note: {note}")
    click.echo("")
    for caution in result.cautions:
        click.echo(f"Caution: {caution}")


# ----------------------------------------------------------------------------- swap log

@click.group()
def swaplog() -> None:
    """Record substitutions made in repairs, list them, and re-check them (audit)."""


@swaplog.command("add")
@click.argument("original")
@click.argument("substitute_part", metavar="SUBSTITUTE")
@click.option("--job", required=True, help="Job reference, e.g. J-2611.")
@_stress_options
@click.option("--policy", "policy_name", default=None, metavar="NAME",
              help="Derating policy the swap was judged by.")
@click.option("--outcome", type=click.Choice(["worked", "failed"]), default=None,
              help="How the swap turned out (can be left open).")
@click.option("--note", default=None, help="Free text: what was done, what was seen.")
@format_option("table", "json")
@pass_state
def swaplog_add(state: CliState, original: str, substitute_part: str, job: str,
                policy_name: str | None, outcome: str | None, note: str | None,
                fmt: str, **values: Any) -> None:
    """Record that SUBSTITUTE replaced ORIGINAL in a job, with the circuit stress."""
    from partsdb.services import swaplog as service

    with state.database().session() as session:
        view = service.add(session, original, substitute_part, job, _stress(values),
                           policy=policy_name, outcome=outcome, note=note)
    if fmt == "json":
        emit_json(view.to_json())
        return
    click.echo(f"recorded swap #{view.id}: {view.original} -> {view.substitute} (job {view.job}"
               + (f", {view.outcome}" if view.outcome else "") + ")")


@swaplog.command("set")
@click.argument("swap_id", metavar="ID", type=click.IntRange(min=1))
@click.option("--outcome", type=click.Choice(["worked", "failed", "unknown"]), required=True,
              help="How the swap turned out (unknown clears a recorded outcome).")
@click.option("--note", default=None, help="Replace the swap's note with this text.")
@format_option("table", "json")
@pass_state
def swaplog_set(state: CliState, swap_id: int, outcome: str, note: str | None,
                fmt: str) -> None:
    """Set the outcome (and note) of recorded swap ID after the fact."""
    from partsdb.services import swaplog as service

    with state.database().session() as session:
        view = service.set_outcome(session, swap_id, outcome, note)
    if fmt == "json":
        emit_json(view.to_json())
        return
    click.echo(f"swap #{view.id}: {view.original} -> {view.substitute} (job {view.job}): "
               f"{view.outcome or 'outcome unknown'}")
    if note is not None:  # the note is replaced, not added to: show what it now reads
        click.echo(f"note (replaced): {view.note or '(none)'}")


@swaplog.command("list")
@click.argument("original", required=False)
@click.option("--substitute", "substitute_part", default=None, metavar="DESIGNATION",
              help="Only swaps that fitted this part.")
@click.option("--job", default=None, help="Only swaps of this job reference.")
@click.option("--outcome", type=click.Choice(["worked", "failed", "unknown"]), default=None,
              help="Only swaps with this outcome (unknown: none recorded yet).")
@click.option("--since", type=click.DateTime(["%Y-%m-%d"]), default=None,
              help="Only swaps recorded on or after this day (YYYY-MM-DD).")
@click.option("--until", type=click.DateTime(["%Y-%m-%d"]), default=None,
              help="Only swaps recorded on or before this day (YYYY-MM-DD).")
@format_option("table", "json")
@pass_state
def swaplog_list(state: CliState, original: str | None, substitute_part: str | None,
                 job: str | None, outcome: str | None, since: Any, until: Any,
                 fmt: str) -> None:
    """List recorded swaps, newest first (only those for ORIGINAL when given; the options
    narrow further)."""
    from partsdb.services import swaplog as service

    with state.database().session() as session:
        views = service.list_swaps(session, original, substitute=substitute_part, job=job,
                                   outcome=outcome, since=since.date() if since else None,
                                   until=until.date() if until else None)
    if fmt == "json":
        emit_json([v.to_json() for v in views])
        return
    print_table("Swap log", ("#", "When", "Original", "Substitute", "Job", "Outcome", "Stress",
                             "Note"),
                [(v.id, v.at.strftime("%Y-%m-%d"), v.original, v.substitute, v.job,
                  v.outcome or "—", _stress_text(v.stress), v.note or "—") for v in views])


def _stress_text(stress: Any) -> str:
    from partsdb.units import format_quantity

    parts = [f"{row.brief} " + ((row.kind == "sink" and shown_sink(getattr(stress, row.name)))
                                or format_quantity(getattr(stress, row.name), row.unit))
             for row in STRESS_FIELDS
             if getattr(stress, row.name) is not None and row.default is None]
    # A default (the 25 °C ambient) is named only beside a stress that was given.
    parts += [f"{row.brief} {getattr(stress, row.name):g} {row.unit}" for row in STRESS_FIELDS
              if parts and row.default is not None and getattr(stress, row.name) != row.default]
    return ", ".join(parts) or "—"


@swaplog.command("audit")
@click.option("--policy", "policy_name", default=None, metavar="NAME",
              help="Re-check every swap under this policy (default: each swap's own).")
@click.option("--all", "show_all", is_flag=True, help="List every swap, not only the problems.")
@format_option("table", "json")
@pass_state
def swaplog_audit(state: CliState, policy_name: str | None, show_all: bool, fmt: str) -> None:
    """Re-check every recorded swap against current device data; list the under-rated ones.

    Exits 0 either way: the list is the finding.
    """
    from partsdb.services import swaplog as service

    with state.database().session() as session:
        items = service.audit(session, policy_name)
    shown = items if show_all else [i for i in items if i.under_rated]
    if fmt == "json":
        emit_json({"checked": len(items),
                   "under_rated": sum(1 for i in items if i.under_rated),
                   "swaps": [i.to_json() for i in shown]})
        return
    print_table("Swap audit", ("#", "Original", "Substitute", "Job", "Verdict", "Policy",
                               "Problems"),
                [(i.swap.id, i.swap.original, i.swap.substitute, i.swap.job, i.verdict, i.policy,
                  "; ".join(i.problems) or "—") for i in shown],
                caption=f"{len(items)} swap(s) checked, "
                        f"{sum(1 for i in items if i.under_rated)} under-rated or incompatible")


# ----------------------------------------------------------------------------- policies

@click.command()
@format_option("table", "json")
def policies(fmt: str) -> None:
    """List the derating policies (built-in and from your config file) with factors and sources."""
    from partsdb.services.config import available_policies, config_path

    found = available_policies()
    if fmt == "json":
        emit_json([{"name": p.name, "factors": p.factors(), "source": p.source,
                    "description": p.description} for p in found.values()])
        return
    print_table("Derating policies", ("Name", "Voltage", "Current", "Power", "Tj margin",
                                      "Tj cap", "Source"),
                [(p.name, f"{p.voltage:.0%}", f"{p.current:.0%}", f"{p.power:.0%}",
                  f"{p.tj_margin:g} K", "—" if p.tj_cap is None else f"{p.tj_cap:g} °C",
                  p.source) for p in found.values()],
                caption=f"factors are fractions of the rating; add your own in {config_path()}")
