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
from partsdb.cli.fet_circuit import FET_KINDS, fet_card, run_jfet_bias, run_mosfet_check

if TYPE_CHECKING:
    from partsdb.bias import BiasReport, StageResult
    from partsdb.derating import Policy
    from partsdb.operating import OperatingCheck

NETWORK_CHOICES = ("divider", "collector-feedback", "fixed", "jfet-self", "jfet-divider")


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
@click.option("--vce", type=QuantityParam("V", "vce", positive=False), default=None,
              help="Bipolar: collector-emitter voltage magnitude at the operating point, "
                   "e.g. 12V.")
@click.option("--ic", type=QuantityParam("A", "ic", positive=False), default=None,
              help="Bipolar: collector current magnitude, e.g. 150mA.")
@click.option("--vds", type=QuantityParam("V", "vds", positive=False), default=None,
              help="MOSFET: drain-source voltage it blocks and switches, e.g. 48V.")
@click.option("--id", "id_", type=QuantityParam("A", "id", positive=False), default=None,
              help="MOSFET: RMS drain current while it conducts, e.g. 5A.")
@click.option("--drive", type=QuantityParam("V", "drive", positive=False), default=None,
              help="MOSFET: gate-source drive while on, e.g. 10V.")
@click.option("--fsw", type=QuantityParam("Hz", "fsw", positive=False), default=None,
              help="MOSFET: switching frequency, e.g. 100kHz (adds a switching-loss estimate).")
@click.option("--gate-current", type=QuantityParam("A", "gate_current"), default=None,
              help="MOSFET, with --fsw: the driver's gate current, e.g. 500mA.")
@click.option("--power", type=QuantityParam("W", "power", positive=False), default=None,
              help="Dissipation if not Vce x Ic (e.g. with a pulsed or AC load), e.g. 2W.")
@click.option("--ambient", type=TemperatureParam("ambient"), default=25.0, show_default=True,
              help="Ambient temperature: °C (45, 45C, 45 °C) or kelvin (318K).")
@click.option("--heatsink", type=QuantityParam("K/W", "heatsink"), default=None,
              help="Sink-to-ambient thermal resistance, K/W (omit for no heat sink).")
@click.option("--case-to-sink", type=QuantityParam("K/W", "case_to_sink", positive=False),
              default=None,
              help="Case-to-sink thermal resistance, K/W (default: the outline's mounting, "
                   "as the substitute finder takes it: 0.5 TO-3, 0.8 TO-247, 1.0 TO-220).")
@click.option("--policy", "policy_name", default="workshop", show_default=True,
              help="Derating policy name (see the policies command).")
@format_option("table", "json")
@pass_state
def check(state: CliState, designation: str, vce: float | None, ic: float | None,
          vds: float | None, id_: float | None, drive: float | None, fsw: float | None,
          gate_current: float | None, power: float | None,
          ambient: float, heatsink: float | None, case_to_sink: float | None,
          policy_name: str, fmt: str) -> None:
    """Grade a device at one operating point: voltage, current, dissipation and junction
    temperature.

    A bipolar part takes --vce and --ic. A MOSFET takes --vds, --id and --drive (and
    optionally --fsw with --gate-current): conduction loss at a self-consistent junction
    temperature, a switching-loss estimate and the heat sink needed.

    Example: partsdb check XK101 --vce 9V --ic 20mA --ambient 40
    """
    from partsdb.operating import check_operating_point
    from partsdb.thermal import mounting_resistance

    policy = _policy(policy_name)
    device = load_device(state, designation)
    fet_options = [n for n, v in (("--vds", vds), ("--id", id_), ("--drive", drive),
                                  ("--fsw", fsw), ("--gate-current", gate_current))
                   if v is not None]
    if device.kind in FET_KINDS or fet_options:
        if device.kind == "jfet":
            fail(f"{device.designation}: not a bipolar part ({device.polarity_text} jfet); "
                 "check takes a MOSFET or a bipolar part (a JFET stage: partsdb bias "
                 "jfet-self)")
        if vce is not None or ic is not None or power is not None:
            what = (f"{device.designation}: not a bipolar part ({device.polarity_text} "
                    f"{device.kind})" if device.kind in FET_KINDS else "--vce/--ic/--power")
            fail(f"{what}; --vce/--ic/--power are for a bipolar part, a MOSFET takes --vds, "
                 "--id and --drive")
        run_mosfet_check(device, vds, id_, drive, fsw, gate_current, ambient, heatsink,
                         case_to_sink, policy, fmt)
        return
    if vce is None or ic is None:
        fail("--vce, --ic: missing; expected both for a bipolar part")
    try:
        result = check_operating_point(
            device, vce, ic, power=power, ambient=ambient, heatsink=heatsink,
            case_to_sink=(mounting_resistance(device.package) if case_to_sink is None
                          else case_to_sink),
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
@click.option("--vcc", type=QuantityParam("V", "vcc", positive=False), default=None,
              help="Supply magnitude, e.g. 12V (a PNP stage may be given as -9V).")
@click.option("--r1", type=QuantityParam("Ω", "r1", positive=False), default=None,
              help="Divider: collector-side rail to base (jfet-divider: supply to gate), "
                   "e.g. 47k.")
@click.option("--r2", type=QuantityParam("Ω", "r2", positive=False), default=None,
              help="Divider: base to emitter-side rail (jfet-divider: gate to ground), "
                   "e.g. 10k.")
@click.option("--rb", type=QuantityParam("Ω", "rb", positive=False), default=None,
              help="Fixed: rail to base; collector-feedback: collector to base.")
@click.option("--rc", type=QuantityParam("Ω", "rc", positive=False), default=None,
              help="Collector resistor, e.g. 2k2.")
@click.option("--vdd", type=QuantityParam("V", "vdd", positive=False), default=None,
              help="JFET networks: supply, e.g. 20V (a P-channel stage may be given as -15V).")
@click.option("--rd", type=QuantityParam("Ω", "rd", positive=False), default=None,
              help="JFET networks: drain resistor, e.g. 3k3.")
@click.option("--rs", type=QuantityParam("Ω", "rs", positive=False), default=None,
              help="JFET networks: source resistor, e.g. 1k (0 for none).")
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
def bias(state: CliState, network: str, vcc: float | None, r1: float | None,
         r2: float | None, rb: float | None, rc: float | None, vdd: float | None,
         rd: float | None, rs: float | None, re: float | None, device_name: str | None,
         polarity: str | None, hfe: float | None, vbe: float | None, vbe_ic: float | None,
         substitute_name: str | None, ambient: float, no_leakage: bool, model: str,
         netlist: bool, fmt: str) -> None:
    """Bias point of a common-emitter stage, and what a substitute does to it.

    Networks: divider (--r1 --r2 --rc --re), collector-feedback (--rb collector to base, --rc,
    --re) and fixed (--rb rail to base, --rc, --re). Give the part as --device, or as
    --polarity --hfe --vbe. With --substitute, shows the shift in Ic and Vce and the one
    resistor (R2 or Rb) to change, with its nearest E12 and E24 values. Values are magnitudes.

    JFET networks (common source, Shockley's equation, the Idss and Vgs(off) windows'
    corners): jfet-self (--vdd --rd --rs --device) and jfet-divider (adding --r1 supply to
    gate, --r2 gate to ground). With --substitute, both parts' points and the source resistor
    that restores the original's drain current.

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

    if network in ("jfet-self", "jfet-divider"):
        bipolar = [n for n, v in (("--vcc", vcc), ("--rb", rb), ("--rc", rc), ("--re", re),
                                  ("--polarity", polarity), ("--hfe", hfe), ("--vbe", vbe),
                                  ("--vbe-ic", vbe_ic)) if v is not None]
        if bipolar or no_leakage or netlist or model != "auto" or ambient != 25.0:
            fail(f"{', '.join(bipolar) or 'option'}: not used by {network}; expected --vdd, "
                 "--rd, --rs, --device (and --r1 --r2 for jfet-divider)")
        run_jfet_bias(state, network, vdd, rd, rs, r1, r2, device_name, substitute_name, fmt)
        return
    jfet_only = [n for n, v in (("--vdd", vdd), ("--rd", rd), ("--rs", rs)) if v is not None]
    if jfet_only:
        fail(f"{', '.join(jfet_only)}: for the JFET networks; expected --vcc, --rc, --re for "
             f"the {network} network")
    if vcc is None or rc is None:
        fail("--vcc, --rc: missing; expected both for a bipolar stage")
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

    A JFET gets an NJF/PJF card (VTO = Vgs(off), BETA = Idss/Vp^2); a MOSFET an approximate
    level-1 card (VTO from Vgs(th), KP from Rds(on) at its drive), with its body diode.

    Example: partsdb spice XK101 > xk101.lib
    """
    from partsdb.spice import model_card

    device = load_device(state, designation)
    if device.kind in FET_KINDS:
        click.echo(fet_card(device), nl=False)
        return
    click.echo(model_card(device), nl=False)


COMMANDS = (check, bias, spice)
