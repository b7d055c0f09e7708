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
    emit_json,
    fail,
    format_option,
    pass_state,
    print_table,
)


def _stress_options(func: Any) -> Any:
    """Circuit-stress options shared by ``substitute`` and ``swaplog add``."""
    options = [
        click.option("--vce-peak", type=QuantityParam("V", "vce_peak"), default=None,
                     help="Highest collector-emitter voltage in the circuit (DC + peak), e.g. 18V."),
        click.option("--ic-peak", type=QuantityParam("A", "ic_peak"), default=None,
                     help="Highest collector current in the circuit, e.g. 150mA."),
        click.option("--power", type=QuantityParam("W", "power"), default=None,
                     help="Dissipation in the part, e.g. 300mW."),
        click.option("--ambient", type=QuantityParam("°C", "ambient", positive=False),
                     default=None, help="Air temperature around the part in °C (default 25)."),
        click.option("--freq", type=QuantityParam("Hz", "freq"), default=None,
                     help="Highest signal frequency the stage must amplify, e.g. 20kHz."),
        click.option("--heatsink", type=QuantityParam("K/W", "heatsink", positive=False),
                     default=None,
                     help="Heat sink, sink-to-ambient K/W (for case-rated parts; default none)."),
    ]
    for option in reversed(options):
        func = option(func)
    return func


def _stress(vce_peak: float | None, ic_peak: float | None, power: float | None,
            ambient: float | None, freq: float | None, heatsink: float | None) -> Any:
    from partsdb.ranking import SpecError, Stress

    try:
        return Stress(vce_peak=vce_peak, ic_peak=ic_peak, power=power,
                      ambient=25.0 if ambient is None else ambient, freq=freq, heatsink=heatsink)
    except SpecError as err:
        fail(str(err))


@click.command()
@click.argument("designation", required=False)
@click.option("--polarity", type=click.Choice(["npn", "pnp"]), default=None,
              help="Polarity of the part needed (overrides the stored record).")
@click.option("--kind", type=click.Choice(["bjt", "darlington"]), default=None,
              help="bjt or darlington (default for a given spec: bjt).")
@click.option("--material", type=click.Choice(["si", "ge", "other"]), default=None,
              help="Material of the original (si, ge, other).")
@click.option("--vceo", type=QuantityParam("V", "vceo"), default=None, help="Vceo needed, e.g. 30V.")
@click.option("--vcbo", type=QuantityParam("V", "vcbo"), default=None, help="Vcbo needed.")
@click.option("--ic", "ic_max", type=QuantityParam("A", "ic_max"), default=None,
              help="Ic max needed, e.g. 0.5A.")
@click.option("--ptot", type=QuantityParam("W", "ptot"), default=None, help="Ptot needed, e.g. 1W.")
@click.option("--ptot-ref", type=click.Choice(["ambient", "case"]), default=None,
              help="Whether the given Ptot is a free-air (ambient) or case rating.")
@click.option("--tj-max", type=QuantityParam("°C", "tj_max"), default=None,
              help="Tj max of the original in °C.")
@click.option("--hfe", type=RangeParam("", "hfe"), default=None,
              help="hFE window needed, e.g. 60..180 (low end first).")
@click.option("--ft", type=QuantityParam("Hz", "ft"), default=None, help="fT needed, e.g. 2MHz.")
@click.option("--package", default=None, help="Outline of the original, e.g. TO-5.")
@click.option("--pinout", default=None, help="Lead order of the original, e.g. EBC.")
@_stress_options
@click.option("--policy", "policy_name", default=None, metavar="NAME",
              help="Derating policy (see 'partsdb policies'; default workshop).")
@click.option("--show-rejected", is_flag=True,
              help="Also list parts of the wrong polarity or kind, marked incompatible.")
@click.option("--in-stock", is_flag=True, help="Only parts in the drawers.")
@click.option("--limit", type=click.IntRange(min=1), default=15, show_default=True,
              help="How many substitutes to list.")
@format_option("table", "json", "md", "html")
@click.option("--output", type=click.Path(dir_okay=False, path_type=Path), default=None,
              help="Write the md/html job sheet to this file instead of the screen.")
@click.option("--job", default=None, help="Job reference to print on the md/html job sheet.")
@click.option("--force", is_flag=True, help="Replace the --output file if it exists.")
@pass_state
def substitute(state: CliState, designation: str | None, polarity: str | None,
               kind: str | None, material: str | None, vceo: float | None, vcbo: float | None,
               ic_max: float | None, ptot: float | None, ptot_ref: str | None,
               tj_max: float | None, hfe: tuple[float, float] | None, ft: float | None,
               package: str | None, pinout: str | None, vce_peak: float | None,
               ic_peak: float | None, power: float | None, ambient: float | None,
               freq: float | None, heatsink: float | None, policy_name: str | None,
               show_rejected: bool, in_stock: bool, limit: int, fmt: str, output: Path | None,
               job: str | None, force: bool) -> None:
    """Rank substitutes for DESIGNATION (its stored record is the requirement) or for a spec.

    Give circuit stress (--vce-peak, --ic-peak, --power, --ambient, --freq, --heatsink) to judge
    candidates against what the circuit does rather than the original's ratings; the derating
    policy sets the margin. Parts in the drawers, and parts that worked before for the same
    original (swaplog), rank higher.
    """
    from partsdb.ranking import SpecError
    from partsdb.services.substitution import rank_substitutes

    if output is not None and fmt not in ("md", "html"):
        fail(f"--output: writes md or html job sheets; use --format md or --format html "
             f"(got {fmt})")
    spec: dict[str, Any] = {
        "polarity": polarity, "kind": kind, "material": material, "vceo": vceo, "vcbo": vcbo,
        "ic_max": ic_max, "ptot": ptot, "ptot_ref": ptot_ref, "tj_max": tj_max, "ft": ft,
        "package": package, "pinout": pinout,
        "hfe_min": hfe[0] if hfe else None, "hfe_max": hfe[1] if hfe else None,
    }
    stress = _stress(vce_peak, ic_peak, power, ambient, freq, heatsink)
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
        from datetime import date

        from partsdb.reports import render_html, render_markdown

        render = render_markdown if fmt == "md" else render_html
        text = render(result, job=job, date=date.today().isoformat())
        if output is None:
            click.echo(text)
        else:
            from partsdb.services.files import protected_files, write_text

            write_text(output, text, force=force, protect=protected_files(state.database()),
                       what="--output")
            click.echo(f"job sheet written to {output}", err=True)
        return
    _print_result(result)


def _print_result(result: Any) -> None:
    from partsdb.reports import key_flags, policy_line, requirement_rows, source_text, stress_rows

    req = result.requirement
    title = f"Substitutes for {req.designation}" if req.designation else "Substitutes"
    click.echo(f"{title} — requirement from {source_text(result)}:")
    click.echo("  " + ", ".join(f"{k} {v}" for k, v in requirement_rows(result)))
    stress = stress_rows(result)
    if stress:
        click.echo("  circuit: " + ", ".join(f"{k} {v}" for k, v in stress))
    click.echo(f"  policy {policy_line(result)}")
    rows = [(n, c.designation, f"{c.score:.0f}", c.verdict, f"{c.confidence:.0%}", c.in_stock,
             ", ".join(c.locations) or "—", key_flags(c))
            for n, c in enumerate(result.candidates, start=1)]
    print_table(None, ("#", "Designation", "Score", "Verdict", "Known", "Stock", "Drawers",
                       "Key flags"), rows,
                caption=f"{result.compatible} compatible of {result.considered} in the catalog")
    if not result.candidates:
        click.echo("No candidate: nothing of this polarity and kind"
                   + (" in the drawers" if result.compatible == 0 else "") + ".")
    for c in result.candidates[:3]:
        lines = [f"{k.parameter}: {k.note}" for k in c.checks
                 if k.status in ("under-rated", "marginal")]
        lines += [f.message for f in c.flags if f.code not in ("material-change", "re-form-leads",
                                                                "other-outline")]
        if lines:
            click.echo(f"{c.designation}:")
            for line in lines:
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
                vce_peak: float | None, ic_peak: float | None, power: float | None,
                ambient: float | None, freq: float | None, heatsink: float | None,
                policy_name: str | None, outcome: str | None, note: str | None,
                fmt: str) -> None:
    """Record that SUBSTITUTE replaced ORIGINAL in a job, with the circuit stress."""
    from partsdb.services import swaplog as service

    with state.database().session() as session:
        view = service.add(session, original, substitute_part, job, vce_peak=vce_peak,
                           ic_peak=ic_peak, power=power, ambient=ambient, freq=freq,
                           heatsink=heatsink, policy=policy_name, outcome=outcome, note=note)
    if fmt == "json":
        emit_json(view.to_json())
        return
    click.echo(f"recorded swap #{view.id}: {view.original} -> {view.substitute} (job {view.job}"
               + (f", {view.outcome}" if view.outcome else "") + ")")


@swaplog.command("list")
@click.argument("original", required=False)
@format_option("table", "json")
@pass_state
def swaplog_list(state: CliState, original: str | None, fmt: str) -> None:
    """List recorded swaps, newest first (only those for ORIGINAL when given)."""
    from partsdb.services import swaplog as service

    with state.database().session() as session:
        views = service.list_swaps(session, original)
    if fmt == "json":
        emit_json([v.to_json() for v in views])
        return
    print_table("Swap log", ("#", "When", "Original", "Substitute", "Job", "Outcome", "Stress",
                             "Note"),
                [(v.id, v.at.strftime("%Y-%m-%d"), v.original, v.substitute, v.job,
                  v.outcome or "—", _stress_text(v.stress), v.note or "—") for v in views])


def _stress_text(stress: Any) -> str:
    from partsdb.units import format_quantity

    parts = []
    for name, label, unit in (("vce_peak", "Vce", "V"), ("ic_peak", "Ic", "A"),
                              ("power", "P", "W"), ("freq", "f", "Hz"),
                              ("heatsink", "sink", "K/W")):
        value = getattr(stress, name)
        if value is not None:
            parts.append(f"{label} {format_quantity(value, unit)}")
    if parts and stress.ambient != 25.0:
        parts.append(f"Ta {stress.ambient:g} °C")
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
