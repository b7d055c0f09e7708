"""CLI faces of the FET circuit checks, called from :mod:`partsdb.cli.circuit`: the MOSFET
``check``, the JFET ``bias`` networks (jfet-self, jfet-divider) and the FET ``spice`` cards.
Each parses nothing itself (circuit.py has the options), makes one domain call and formats."""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import click

from partsdb.cli.common import CliState, emit_json, fail, load_device, print_table

if TYPE_CHECKING:
    from partsdb.device import Device
    from partsdb.jfet import JfetParams, JfetReport
    from partsdb.mosfet_loss import MosfetCheck

FET_KINDS = ("mosfet", "jfet")


def _q(value: float | None, unit: str, digits: int = 3) -> str:
    from partsdb.units import format_quantity

    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "—"
    return format_quantity(value, unit, digits)


def _caution() -> None:
    from partsdb.cautions import SHORT_CAUTION

    click.echo(SHORT_CAUTION)


def run_mosfet_check(device: Device, vds: float | None, id_: float | None,
                     drive: float | None, fsw: float | None, gate_current: float | None,
                     ambient: float, heatsink: float | None, case_to_sink: float | None,
                     policy: Any, fmt: str) -> None:
    """``partsdb check`` for a MOSFET."""
    from partsdb.errors import InvalidInput
    from partsdb.mosfet_loss import MosfetPoint, check_mosfet, params_from_record
    from partsdb.thermal import mounting_resistance

    if getattr(device, "kind", None) != "mosfet":
        fail(f"device: {device.designation} is a {device.polarity_text} {device.kind}; "
             "expected a MOSFET for --vds/--id/--drive (a bipolar part takes --vce and --ic)")
    missing = [n for n, v in (("--vds", vds), ("--id", id_), ("--drive", drive)) if v is None]
    if missing:
        fail(f"{', '.join(missing)}: missing; expected --vds, --id and --drive for the MOSFET "
             f"{device.designation}")
    assert vds is not None and id_ is not None and drive is not None
    if device.polarity == "p":
        vds, id_, drive = abs(vds), abs(id_), abs(drive)  # a P-channel point may be signed
    elif drive < 0:
        fail(f"--drive: {drive:g} V is negative for an N-channel MOSFET; expected a positive "
             "gate drive (only a P-channel part may be given a negative one)")
    try:
        point = MosfetPoint(vds=vds, id=id_, drive=drive, fsw=fsw,
                            gate_current=gate_current, ambient=ambient, heatsink=heatsink,
                            case_to_sink=(mounting_resistance(device.package)
                                          if case_to_sink is None else case_to_sink))
        result = check_mosfet(params_from_record(device), point, policy)
    except InvalidInput as err:
        fail(str(err))
    if fmt == "json":
        emit_json(result.to_json())
        return
    _print_mosfet(result)


def _print_mosfet(r: MosfetCheck) -> None:
    rows = []
    for lim in r.limits:
        ratio = "—" if lim.ratio is None or not math.isfinite(lim.ratio) else f"{lim.ratio:.0%}"
        rows.append((lim.parameter, _q(lim.limit, lim.unit), _q(lim.allowed, lim.unit),
                     _q(lim.actual, lim.unit), ratio, lim.status.upper(), lim.note))
    p = r.point
    print_table(f"{r.device} at Vds {_q(p.vds, 'V')}, Id {_q(p.id, 'A')}, drive "
                f"{_q(p.drive, 'V')} — {r.worst.upper()}",
                ("Limit", "Rating", "Policy allows", "Actual", "Ratio", "Status", "Note"),
                rows, caption=f"policy {r.policy.name}; ambient {p.ambient:g} °C")
    conduction = None if r.rds_on_tj is None else p.id ** 2 * r.rds_on_tj
    switching = f", switching {_q(r.switching, 'W')} (estimate)" if p.fsw else ""
    click.echo(f"Rds(on) at the drive {_q(r.rds_on_drive, 'Ω')}, at Tj {_q(r.rds_on_tj, 'Ω')};"
               f" conduction {_q(conduction, 'W')}{switching}, total {_q(r.power, 'W')}")
    if r.heatsink_verdict:
        click.echo(f"Heat sink: {r.heatsink_verdict} (Tj at the policy limit)")
    for note in r.notes:
        click.echo(f"note: {note}")
    _caution()


def _jfet_params(state: CliState, designation: str) -> JfetParams:
    from partsdb.jfet import params_from_record

    return params_from_record(load_device(state, designation))


def run_jfet_bias(state: CliState, network: str, vdd: float | None, rd: float | None,
                  rs: float | None, r1: float | None, r2: float | None,
                  device_name: str | None, substitute_name: str | None, fmt: str) -> None:
    """``partsdb bias jfet-self`` / ``jfet-divider``."""
    from partsdb.jfet import JfetError, JfetStage, analyse_jfet_stage

    missing = [n for n, v in (("--vdd", vdd), ("--rd", rd), ("--rs", rs),
                              ("--device", device_name)) if v is None]
    if network == "jfet-divider":
        missing += [n for n, v in (("--r1", r1), ("--r2", r2)) if v is None]
    if missing:
        fail(f"{', '.join(missing)}: missing; expected for a {network} stage")
    if network == "jfet-self" and (r1 is not None or r2 is not None):
        fail("--r1/--r2: not used by jfet-self (the gate is at 0 V); use jfet-divider")
    assert vdd is not None and device_name is not None
    try:
        original = _jfet_params(state, device_name)
        if vdd < 0 and original.polarity == "n":
            fail(f"--vdd: {vdd:g} V is negative for an N-channel JFET; expected a positive "
                 "supply (only a P-channel stage may be given a negative supply)")
        if vdd == 0:
            fail("--vdd: 0 V is not valid; expected a supply magnitude above 0 V")
        stage = JfetStage(network="self" if network == "jfet-self" else "divider",
                          vdd=abs(vdd), rd=rd, rs=rs, r1=r1, r2=r2)  # type: ignore[arg-type]
        substitute = None if substitute_name is None else _jfet_params(state, substitute_name)
        report = analyse_jfet_stage(stage, original, substitute)
    except JfetError as err:
        fail(str(err))
    if fmt == "json":
        emit_json(report.to_json())
        return
    _print_jfet(report)


def _print_jfet(report: JfetReport) -> None:
    results = [report.original] + ([report.substitute] if report.substitute else [])
    columns = ["", f"{report.original.device} (original)"]
    if report.substitute:
        columns.append(f"{report.substitute.device} (substitute)")

    def row(label: str, get: Any, unit: str) -> tuple[str, ...]:
        return (label, *(_q(get(r), unit) for r in results))

    rows = [row("Id", lambda r: r.typ.id, "A"), row("Vgs", lambda r: r.typ.vgs, "V"),
            row("Vds", lambda r: r.typ.vds, "V"), row("Vs", lambda r: r.typ.vs, "V"),
            row("Dissipation", lambda r: r.typ.power, "W"),
            ("Region", *(r.typ.region for r in results)),
            row("Id, low corner", lambda r: r.low.id, "A"),
            row("Id, high corner", lambda r: r.high.id, "A")]
    s = report.stage
    parts = [f"Vdd {_q(s.vdd, 'V')}"] + [f"{n.upper()} {_q(getattr(s, n), 'Ω')}"
                                         for n in ("r1", "r2", "rd", "rs")
                                         if getattr(s, n) is not None]
    print_table(f"JFET {s.network} bias: " + ", ".join(parts), columns, rows,
                caption="Id a magnitude; Vgs and Vds with the channel's signs")
    if report.fix is not None:
        f = report.fix
        click.echo(f"Fix: change RS from {_q(f.original_value, 'Ω')} to {_q(f.exact, 'Ω', 4)} "
                   f"(exact) to restore Id {_q(f.target_id, 'A')}, {f.target}:")
        for label, opt in (("E12", f.e12), ("E24", f.e24)):
            click.echo(f"  {label} {_q(opt.value, 'Ω')}: Id {_q(opt.id, 'A')}, Vgs "
                       f"{_q(opt.vgs, 'V')} ({opt.region}); corners {_q(opt.id_low, 'A')} to "
                       f"{_q(opt.id_high, 'A')}")
    for note in report.to_json()["notes"]:
        click.echo(f"note: {note}")
    for r in results:
        for note in r.notes:
            click.echo(f"note: {note}")
    _caution()


def fet_card(device: Device) -> str:
    """The SPICE card of a stored JFET or MOSFET."""
    from partsdb.jfet import params_from_record
    from partsdb.spice_fet import MosfetCardParams, jfet_card, mosfet_card

    if device.kind == "jfet":
        return jfet_card(params_from_record(device))

    def mag(name: str) -> float | None:
        value = getattr(device, name, None)
        return None if value is None else abs(float(value))

    return mosfet_card(MosfetCardParams(
        name=device.designation, polarity=device.polarity,
        mode=getattr(device, "mode", None) or "enhancement",
        vgs_th_min=mag("vgs_th_min") if device.vgs_th_min is not None else mag("vgs_off_min"),
        vgs_th_max=mag("vgs_th_max") if device.vgs_th_max is not None else mag("vgs_off_max"),
        rds_on=mag("rds_on"),
        rds_on_vgs=mag("rds_on_vgs"), body_diode=bool(getattr(device, "body_diode", False)),
        trr=mag("trr")))
