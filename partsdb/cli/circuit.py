"""CLI: ``check`` (operating point against ratings), ``bias`` (stage bias and swap prediction)
and ``spice`` (model card export).

Each command parses options, makes one call into :mod:`partsdb.operating`,
:mod:`partsdb.bias` or :mod:`partsdb.spice`, and formats the result.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import click

from partsdb.cli.common import (
    CliState,
    QuantityParam,
    TemperatureParam,
    emit_json,
    fail,
    format_option,
    load_device,
    pass_state,
    print_table,
)

if TYPE_CHECKING:
    from partsdb.bias import BiasReport, StageResult
    from partsdb.derating import Policy
    from partsdb.operating import OperatingCheck

NETWORK_CHOICES = ("divider", "collector-feedback", "fixed")


def _q(value: float | None, unit: str, digits: int = 3) -> str:
    from partsdb.units import format_quantity

    return format_quantity(value, unit, digits)


def _caution() -> None:
    from partsdb.cautions import SHORT_CAUTION

    click.echo(SHORT_CAUTION)


def _policy(name: str) -> Policy:
    """A policy by name: the built-ins and the user's own from the configuration file."""
    from partsdb.services.config import load_policy

    return load_policy(name)


@click.command()
@click.argument("designation")
@click.option("--vce", type=QuantityParam("V", "vce", positive=False), required=True,
              help="Collector-emitter voltage magnitude at the operating point, e.g. 12V.")
@click.option("--ic", type=QuantityParam("A", "ic", positive=False), required=True,
              help="Collector current magnitude, e.g. 150mA.")
@click.option("--power", type=QuantityParam("W", "power", positive=False), default=None,
              help="Dissipation if not Vce x Ic (e.g. with a pulsed or AC load), e.g. 2W.")
@click.option("--ambient", type=TemperatureParam("ambient"), default=25.0, show_default=True,
              help="Ambient temperature: °C (45, 45C, 45 °C) or kelvin (318K).")
@click.option("--heatsink", type=QuantityParam("K/W", "heatsink"), default=None,
              help="Sink-to-ambient thermal resistance, K/W (omit for no heat sink).")
@click.option("--case-to-sink", type=QuantityParam("K/W", "case_to_sink", positive=False),
              default=None, help="Case-to-sink thermal resistance, K/W (default 0.5, greased).")
@click.option("--policy", "policy_name", default="workshop", show_default=True,
              help="Derating policy name (see the policies command).")
@format_option("table", "json")
@pass_state
def check(state: CliState, designation: str, vce: float, ic: float, power: float | None,
          ambient: float, heatsink: float | None, case_to_sink: float | None,
          policy_name: str, fmt: str) -> None:
    """Grade a device at one operating point: Vce, Ic, dissipation and junction temperature.

    Example: partsdb check XK101 --vce 9V --ic 20mA --ambient 40
    """
    from partsdb.operating import check_operating_point
    from partsdb.thermal import DEFAULT_CASE_TO_SINK

    policy = _policy(policy_name)
    device = load_device(state, designation)
    try:
        result = check_operating_point(
            device, vce, ic, power=power, ambient=ambient, heatsink=heatsink,
            case_to_sink=DEFAULT_CASE_TO_SINK if case_to_sink is None else case_to_sink,
            policy=policy)
    except ValueError as err:
        fail(str(err))
    if fmt == "json":
        emit_json(result.to_json())
        return
    _print_check(result)


def _print_check(result: OperatingCheck) -> None:
    rows = []
    for lim in result.limits:
        ratio = "—" if lim.ratio is None else f"{lim.ratio:.0%}"
        rows.append((lim.parameter, _q(lim.limit, lim.unit), _q(lim.allowed, lim.unit),
                     _q(lim.actual, lim.unit), ratio, lim.status.upper(),
                     _q(lim.headroom, lim.unit), lim.note))
    caption = (f"policy {result.policy.name}: {result.policy.source}; ambient "
               f"{result.ambient:g} °C; dissipation {_q(result.power, 'W')}")
    print_table(f"{result.device} at Vce {_q(result.vce, 'V')}, Ic {_q(result.ic, 'A')} — "
                f"{result.worst.upper()}",
                ("Limit", "Rating", "Policy allows", "Actual", "Ratio", "Status", "Headroom",
                 "Note"), rows, caption=caption)
    if result.ic_allowed_at_vce is not None and result.hyperbola_fraction is not None:
        click.echo(f"Power hyperbola: at Vce {_q(result.vce, 'V')} the allowed dissipation "
                   f"{_q(result.p_allowed, 'W')} permits Ic up to "
                   f"{_q(result.ic_allowed_at_vce, 'A')}; this point uses "
                   f"{result.hyperbola_fraction:.0%} of it.")
    for note in result.notes:
        click.echo(f"note: {note}")
    _caution()


def _device_params(state: CliState, designation: str) -> Any:
    from partsdb.bias import BiasError, params_from_device

    device = load_device(state, designation)
    try:
        return params_from_device(device)
    except BiasError as err:
        fail(str(err))


@click.command()
@click.argument("network", type=click.Choice(NETWORK_CHOICES))
@click.option("--vcc", type=QuantityParam("V", "vcc", positive=False), required=True,
              help="Supply magnitude, e.g. 12V (a PNP stage may be given as -9V).")
@click.option("--r1", type=QuantityParam("Ω", "r1", positive=False), default=None,
              help="Divider: collector-side rail to base, e.g. 47k.")
@click.option("--r2", type=QuantityParam("Ω", "r2", positive=False), default=None,
              help="Divider: base to emitter-side rail, e.g. 10k.")
@click.option("--rb", type=QuantityParam("Ω", "rb", positive=False), default=None,
              help="Fixed: rail to base; collector-feedback: collector to base.")
@click.option("--rc", type=QuantityParam("Ω", "rc", positive=False), required=True,
              help="Collector resistor, e.g. 2k2.")
@click.option("--re", type=QuantityParam("Ω", "re", positive=False), default=None,
              help="Emitter resistor, e.g. 470R; required for a divider, 0 when omitted "
                   "for the others.")
@click.option("--device", "device_name", default=None, help="Stored device in the stage.")
@click.option("--polarity", type=click.Choice(("npn", "pnp")), default=None,
              help="Instead of --device: polarity of the part.")
@click.option("--hfe", type=QuantityParam("", "hfe"), default=None,
              help="Instead of --device: current gain (beta).")
@click.option("--vbe", type=QuantityParam("V", "vbe"), default=None,
              help="Instead of --device: Vbe(on) magnitude, e.g. 0.65V.")
@click.option("--vbe-ic", type=QuantityParam("A", "vbe_ic"), default=None,
              help="With --vbe: its test current (enables the exponential model).")
@click.option("--substitute", "substitute_name", default=None,
              help="Stored device to swap in: predicts the shift and the resistor fix.")
@click.option("--ambient", type=TemperatureParam("ambient"), default=25.0, show_default=True,
              help="Ambient temperature: °C (45, 45C, 45 °C) or kelvin (318K).")
@click.option("--no-leakage", is_flag=True, help="Ignore collector-base leakage Icbo.")
@click.option("--model", type=click.Choice(("auto", "fixed-vbe", "exponential")),
              default="auto", show_default=True,
              help="Device model: exponential when Vbe(on) has a test current, else fixed Vbe.")
@click.option("--netlist", is_flag=True, help="Also print the ngspice netlist of each stage.")
@format_option("table", "json")
@pass_state
def bias(state: CliState, network: str, vcc: float, r1: float | None, r2: float | None,
         rb: float | None, rc: float, re: float | None, device_name: str | None,
         polarity: str | None, hfe: float | None, vbe: float | None, vbe_ic: float | None,
         substitute_name: str | None, ambient: float, no_leakage: bool, model: str,
         netlist: bool, fmt: str) -> None:
    """Bias point of a common-emitter stage, and what a substitute does to it.

    Networks: divider (--r1 --r2 --rc --re), collector-feedback (--rb collector to base, --rc,
    --re) and fixed (--rb rail to base, --rc, --re). Give the part as --device, or as
    --polarity --hfe --vbe. With --substitute, shows the shift in Ic and Vce and the one
    resistor (R2 or Rb) to change, with its nearest E12 and E24 values. Values are magnitudes.

    Example: partsdb bias divider --vcc 9V --r1 47k --r2 10k --rc 2k2 --re 470 --device XK101
    --substitute XK202
    """
    from partsdb.bias import (
        BiasError,
        Stage,
        TransistorParams,
        analyse_bias,
        supply_magnitude,
    )

    direct = [name for name, v in (("--polarity", polarity), ("--hfe", hfe), ("--vbe", vbe))
              if v is not None]
    if device_name is not None and direct:
        fail(f"give either --device or {', '.join(direct)}, not both")
    if device_name is None and len(direct) != 3:
        fail("give the part: --device NAME, or all of --polarity, --hfe and --vbe")
    if vbe_ic is not None and vbe is None:
        fail("--vbe-ic: only with --vbe (a stored device brings its own test current)")
    try:
        if device_name is not None:
            original = _device_params(state, device_name)
        else:
            assert polarity is not None and hfe is not None and vbe is not None
            original = TransistorParams(name="given", polarity=polarity, hfe=hfe, vbe=vbe,
                                        vbe_ic=vbe_ic)
        magnitude = supply_magnitude(vcc, original.polarity, "--vcc")  # the TUI's rule too
        if re is None and network != "divider":
            re = 0.0  # fixed and collector-feedback stages are often built without Re
        stage = Stage(network=network, vcc=magnitude, rc=rc, re=re, r1=r1, r2=r2, rb=rb)
        substitute = None if substitute_name is None else _device_params(state, substitute_name)
        report = analyse_bias(stage, original, substitute, model=model, ambient=ambient,
                              leakage=not no_leakage)
    except BiasError as err:
        fail(str(err))
    netlists = _netlists(report, ambient, not no_leakage) if netlist else {}
    if fmt == "json":
        data = report.to_json()
        if netlist:
            data["netlist"] = netlists
        emit_json(data)
        return
    _print_bias(report)
    for which, text in netlists.items():
        click.echo(f"* --- ngspice netlist, {which} ---")
        click.echo(text, nl=False)


def _netlists(report: BiasReport, ambient: float, leakage: bool) -> dict[str, str]:
    from partsdb.spice import stage_netlist

    out: dict[str, str] = {}
    for which, result in (("original", report.original), ("substitute", report.substitute)):
        if result is not None and result.params is not None:
            out[which] = stage_netlist(report.stage, result.params, ambient, leakage)
    return out


def _result_rows(results: list[StageResult]) -> list[tuple[str, ...]]:
    def row(label: str, get: Any, unit: str) -> tuple[str, ...]:
        return (label, *(_q(get(r), unit) for r in results))

    rows = [
        row("Ic", lambda r: r.point.ic, "A"),
        row("Vce", lambda r: r.point.vce, "V"),
        row("Ib", lambda r: r.point.ib, "A"),
        row("Vb", lambda r: r.point.vb, "V"),
        row("Ve", lambda r: r.point.ve, "V"),
        row("Dissipation", lambda r: r.point.power, "W"),
        ("Region", *(r.point.region for r in results)),
        row("Ic at hFE min", lambda r: r.ic_hfe_min, "A"),
        row("Ic at hFE max", lambda r: r.ic_hfe_max, "A"),
        ("Model", *(r.model for r in results)),
    ]
    stab = results[0].stability
    if stab.get("rule"):
        rows.append(("Divider firm?", *(("yes" if r.stability["met"] else "no") + " ("
                                        + r.stability["grade"] + ")" for r in results)))
    return rows


def _print_bias(report: BiasReport) -> None:
    results = [report.original] + ([report.substitute] if report.substitute else [])
    columns = ["", f"{report.original.device} (original)"]
    if report.substitute:
        columns.append(f"{report.substitute.device} (substitute)")
    s = report.stage
    parts = [f"Vcc {_q(s.vcc, 'V')}"] + [
        f"{n.upper()} {_q(getattr(s, n), 'Ω')}" for n in ("r1", "r2", "rb", "rc", "re")
        if getattr(s, n) is not None]
    print_table(f"{s.network} bias: " + ", ".join(parts), columns, _result_rows(results),
                caption="magnitudes; a PNP stage is shown as its mirror image")
    if report.substitute is not None and report.ic_change is not None:
        shift = (f"Swap: Ic {report.ic_change:+.1%}, Vce {report.vce_change:+.2f} V")
        if report.substitute.point.region != "active":
            shift += f"; the substitute is in {report.substitute.point.region.upper()}"
        click.echo(shift)
    if report.fix is not None:
        f = report.fix
        name = f.resistor.upper()
        click.echo(f"Fix: change {name} from {_q(f.original_value, 'Ω')} to "
                   f"{_q(f.exact, 'Ω', 4)} (exact) to restore Ic {_q(f.target_ic, 'A')}, "
                   f"{f.target}:")
        for label, opt in (("E12", f.e12), ("E24", f.e24)):
            click.echo(f"  {label} {_q(opt.value, 'Ω')}: Ic {_q(opt.ic, 'A')}, "
                       f"Vce {_q(opt.vce, 'V')} ({opt.region}); at hFE min "
                       f"{_q(opt.ic_hfe_min, 'A')} ({opt.region_hfe_min}), at hFE max "
                       f"{_q(opt.ic_hfe_max, 'A')} ({opt.region_hfe_max})")
    for r in results:
        for note in r.notes:
            click.echo(f"note: {note}")
    for note in report.notes:
        click.echo(f"note: {note}")
    _caution()


@click.command()
@click.argument("designation")
@pass_state
def spice(state: CliState, designation: str) -> None:
    """Print a SPICE .model card for a stored device (BF, IS, TF derived from its record).

    Example: partsdb spice XK101 > xk101.lib
    """
    from partsdb.spice import model_card

    click.echo(model_card(load_device(state, designation)), nl=False)


COMMANDS = (check, bias, spice)
