"""SPICE export: a Gummel-Poon model card for a stored device, and ngspice netlists of a stage.

The model is deliberately small: BF from the hFE window, IS from Vbe(on) at its test current,
TF from fT; every other parameter is the SPICE default (BR = 1, no Early voltage, no
high-injection knee, no junction capacitances, no series resistances). That is the model
:mod:`partsdb.bias` solves in its exponential mode, so ngspice can check partsdb's arithmetic.
It is not a substitute for the maker's model.

Netlists follow ngspice batch use (``ngspice -b file.cir``): a ``.control`` block runs ``op``,
echoes one ``RESULT key=value ...`` line and ends with ``quit 0`` (without it ngspice exits 1
even on success).
"""

from __future__ import annotations

import math
import re

from partsdb.bias import (
    VBE_DARLINGTON,
    VBE_DEFAULT,
    Stage,
    TransistorParams,
    leakage_at,
    saturation_current,
    thermal_voltage,
    typical_hfe,
    vbe_at,
)
from partsdb.device import Device, require_bipolar

EG_GERMANIUM = 0.67
"""Band gap for germanium cards, eV (common practice in germanium SPICE models; about 0.66 eV
at 300 K). Without it SPICE uses its default 1.11 eV, silicon's, and a germanium junction's
Vbe falls about -3.3 mV/K instead of about -1.8 to -2 mV/K."""
XTI_DEFAULT = 3.0
"""Saturation-current temperature exponent (the SPICE default for a junction transistor,
written out so the card states its whole temperature model)."""

BF_DEFAULT = 100.0
"""BF when the record has no hFE (SPICE's own default is 100)."""
VBE_IC_DEFAULT = 1e-3
"""Test current assumed for a default Vbe(on), A (common practice: datasheets quote ~1 mA)."""


def model_name(designation: str) -> str:
    """A SPICE-safe model name: letters, digits and underscores."""
    name = re.sub(r"[^A-Za-z0-9_]", "_", designation.strip().upper())
    return name or "Q_UNNAMED"


def _g(value: float) -> str:
    return f"{value:.6g}"


def model_card(device: Device) -> str:
    """A commented ``.model`` line for ``device`` (parameters at TNOM = 25 °C)."""
    require_bipolar(device, "the SPICE model card")
    kind = "PNP" if device.polarity == "pnp" else "NPN"
    lines = [f"* partsdb model for {device.designation} ({device.polarity.upper()}, "
             f"{device.material}, {device.kind}); derived from the stored record"]
    params: list[str] = []
    hfe = typical_hfe(device.hfe_min, device.hfe_max)
    if hfe is None:
        hfe = BF_DEFAULT
        lines.append(f"* BF = {_g(hfe)}: default (no hFE in the record)")
    else:
        window = "..".join("?" if v is None else f"{v:g}" for v in (device.hfe_min,
                                                                    device.hfe_max))
        lines.append(f"* BF = {_g(hfe)}: geometric mean of the hFE window {window}")
    params.append(f"BF={_g(hfe)}")
    vt = thermal_voltage(25.0)
    nf = 1.0
    if device.kind == "darlington":
        # Two junctions in series: the pair's Vbe grows with 2 Vt per e-fold of current.
        nf = 2.0
        lines.append("* NF = 2: a Darlington pair approximated as one device with two "
                     "junction drops")
    formula = ("IS = Ic/(exp(Vbe/Vt)-1)" if nf == 1.0
               else f"IS = Ic/(exp(Vbe/({_g(nf)} Vt))-1)")
    if device.vbe_on is not None and device.vbe_ic is not None:
        vbe, ic = device.vbe_on, device.vbe_ic
        lines.append(f"* IS from Vbe(on) {_g(vbe)} V at {_g(ic)} A: {formula}, "
                     f"Vt {vt * 1e3:.4g} mV at 25 C")
    else:
        vbe = VBE_DARLINGTON if device.kind == "darlington" else VBE_DEFAULT.get(
            device.material, 0.65)
        ic = VBE_IC_DEFAULT
        lines.append(f"* IS from a default Vbe {_g(vbe)} V at {_g(ic)} A for "
                     f"{device.material} (no Vbe(on) in the record; common practice): "
                     f"{formula}, Vt {vt * 1e3:.4g} mV at 25 C")
    i_s = ic / math.expm1(vbe / (nf * vt))
    params.append(f"IS={i_s:.6e}")
    if nf != 1.0:
        params.append(f"NF={_g(nf)}")
    if device.ft is not None:
        tf = 1.0 / (2.0 * math.pi * device.ft)
        lines.append(f"* TF = 1/(2 pi fT) with fT {_g(device.ft)} Hz (ignores junction "
                     "capacitances)")
        params.append(f"TF={tf:.6e}")
    else:
        lines.append("* TF: default 0 (no fT in the record)")
    if device.material == "ge":
        lines.append(f"* EG = {_g(EG_GERMANIUM)} eV, XTI = {_g(XTI_DEFAULT)}: germanium's band "
                     "gap for the temperature model (common practice; SPICE's default EG "
                     "1.11 eV is silicon's)")
        params += [f"EG={_g(EG_GERMANIUM)}", f"XTI={_g(XTI_DEFAULT)}"]
    params.append("TNOM=25")
    lines.append("* defaults: BR=1, VAF=inf, IKF=inf, RB=RE=RC=0, CJE=CJC=0"
                 + ("" if device.material == "ge" else ", EG=1.11, XTI=3")
                 + " (not from the record)")
    lines.append(f".model {model_name(device.designation)} {kind}({' '.join(params)})")
    return "\n".join(lines) + "\n"


def stage_netlist(stage: Stage, device_params: TransistorParams, ambient: float = 25.0,
                  leakage: bool = True, beta: float | None = None) -> str:
    """An ngspice netlist of ``stage`` with the device model partsdb's exponential mode uses.

    The PNP stage is drawn with its collector-side rail at -|Vcc| and the emitter-side rail at
    ground, the mirror of the NPN stage. Zero-volt sources measure the collector and base
    currents outside the leakage source, so RESULT reports the currents the circuit sees.
    """
    p = device_params
    npn = p.polarity == "npn"
    kind = "NPN" if npn else "PNP"
    bf = p.hfe if beta is None else beta
    i_s = saturation_current(p, ambient)
    nf = ""
    formula = "IS = Ic/(exp(Vbe/Vt)-1)"
    if p.kind == "darlington":
        # Two junctions in series (see model_card): emission coefficient 2, IS to match.
        ic_test = p.vbe_ic if p.vbe_ic is not None else VBE_IC_DEFAULT
        i_s = ic_test / math.expm1(vbe_at(p, ambient) / (2.0 * thermal_voltage(ambient)))
        nf = " NF=2"
        formula = "IS = Ic/(exp(Vbe/(2 Vt))-1)"
    vcc = stage.vcc if npn else -stage.vcc
    icbo = leakage_at(p, ambient) if leakage else 0.0
    name = model_name(p.name)
    source = ("Vbe(on) at its test current" if p.vbe_ic is not None
              else f"Vbe {p.vbe:g} V at an assumed {VBE_IC_DEFAULT:g} A")
    lines = [
        f"* partsdb: {stage.network} bias, {kind} {p.name}, {ambient:g} C",
        f"* IS from {source}, shifted -{2 if p.kind != 'darlington' else 4} mV/K to "
        f"{ambient:g} C (common practice): {formula} with Vt at {ambient:g} C; BF = {_g(bf)}",
        "* TNOM = .temp: the temperature shift is partsdb's, not SPICE's own model",
        f"VCC vcc 0 DC {_g(vcc)}",
    ]
    if stage.network == "divider":
        lines += [f"R1 vcc b {_g(stage.r1 or 0.0)}", f"R2 b 0 {_g(stage.r2 or 0.0)}"]
    elif stage.network == "fixed":
        lines.append(f"RB vcc b {_g(stage.rb or 0.0)}")
    else:
        lines.append(f"RB c b {_g(stage.rb or 0.0)}")
    # A 0 ohm resistor is not allowed in SPICE: a 0 V source shorts the node instead.
    lines.append(f"RC vcc c {_g(stage.rc)}" if stage.rc > 0 else "VRC vcc c DC 0")
    lines.append(f"RE e 0 {_g(stage.re or 0.0)}" if (stage.re or 0.0) > 0 else "VRE e 0 DC 0")
    lines += [
        "VMC c cq DC 0",
        "VMB b bq DC 0",
        f"Q1 cq bq e {name}",
    ]
    if icbo > 0 and p.kind == "darlington":
        # A pair's own leakage, at its terminals: collector to emitter, not amplified.
        lines.append(f"ILK {'cq e' if npn else 'e cq'} DC {icbo:.6e}")
    elif icbo > 0:
        # Collector-base leakage: a current source from collector to base inside the device.
        lines.append(f"ILK {'cq bq' if npn else 'bq cq'} DC {icbo:.6e}")
    lines += [
        f".model {name} {kind}(IS={i_s:.9e} BF={bf:.9g}{nf} TNOM={ambient:g})",
        f".temp {ambient:g}",
        ".control",
        "op",
        "echo RESULT IC=$&i(vmc) IB=$&i(vmb) VC=$&v(c) VB=$&v(b) VE=$&v(e)",
        "quit 0",
        ".endc",
        ".end",
    ]
    return "\n".join(lines) + "\n"


def parse_result(output: str) -> dict[str, float]:
    """The key=value pairs of the last ``RESULT`` line in ngspice output."""
    found: dict[str, float] | None = None
    for line in output.splitlines():
        if line.startswith("RESULT"):
            found = {k.lower(): float(v) for k, v in re.findall(r"(\w+)=(\S+)", line)}
    if found is None:
        raise ValueError("ngspice output: no RESULT line; expected 'RESULT IC=... VC=...'")
    return found


__all__ = ["model_card", "model_name", "parse_result", "stage_netlist", "thermal_voltage"]
