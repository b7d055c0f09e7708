"""Running ngspice as the circuit oracle (batch mode, one RESULT line per netlist)."""

from __future__ import annotations

import os
import shutil
import subprocess
from pathlib import Path

import pytest

from partsdb.spice import parse_result


def require_ngspice() -> str:
    """Path of ngspice; skip with the reason when absent, but fail when CI is set."""
    path = shutil.which("ngspice")
    if path is None:
        reason = "ngspice is not on PATH (apt-get install ngspice)"
        if os.environ.get("CI"):
            pytest.fail(f"CI must run the ngspice comparisons: {reason}")
        pytest.skip(reason)
    return path


def run_netlist(netlist: str, workdir: Path) -> dict[str, float]:
    """Run ``netlist`` with ``ngspice -b`` and return the RESULT values (SI, signed)."""
    exe = require_ngspice()
    cir = workdir / "stage.cir"
    cir.write_text(netlist)
    done = subprocess.run([exe, "-b", str(cir)], capture_output=True, text=True, timeout=60,
                          check=False)
    assert done.returncode == 0, f"ngspice failed:\n{done.stdout}\n{done.stderr}"
    return parse_result(done.stdout)


# --- Oracle netlists, independent of partsdb.bias and partsdb.spice ---------------------------
# Built from the record's raw values only (Vbe(on) at its test current, hFE, Icbo at 25 °C,
# material); the temperature is SPICE's own model (.temp with TNOM = 25: IS(T) from EG and
# XTI), not partsdb's -2 mV/K shift. Constants are the exact SI defining values (SI Brochure,
# 9th ed., table 1), written here rather than imported from the code under test.
BOLTZMANN = 1.380649e-23
CHARGE = 1.602176634e-19
ZERO_C = 273.15
EG = {"si": 1.11, "ge": 0.67}
"""Band gaps, eV: 1.11 is SPICE's default for silicon; 0.67 for germanium (common practice)."""


def oracle_is(vbe_on: float, vbe_ic: float) -> float:
    """IS at 25 °C from Vbe(on) at its test current: Ic = IS (exp(Vbe/Vt) - 1)."""
    import math

    vt = BOLTZMANN * (25.0 + ZERO_C) / CHARGE
    return vbe_ic / math.expm1(vbe_on / vt)


def oracle_model(name: str, polarity: str, bf: float, vbe_on: float, vbe_ic: float,
                 material: str) -> str:
    kind = "NPN" if polarity == "npn" else "PNP"
    return (f".model {name} {kind}(IS={oracle_is(vbe_on, vbe_ic):.9e} BF={bf:.9g} "
            f"EG={EG[material]:g} XTI=3 TNOM=25)")


def oracle_stage(stage: object, polarity: str, bf: float, vbe_on: float, vbe_ic: float,
                 material: str = "si", ambient: float = 25.0, icbo25: float = 0.0) -> str:
    """A common-emitter stage netlist; the leakage (Icbo at 25 °C doubling every 10 K, common
    practice) is a current source between collector and base, outside SPICE's model."""
    g = getattr
    npn = polarity == "npn"
    vcc = g(stage, "vcc") if npn else -g(stage, "vcc")
    network = g(stage, "network")
    lines = [f"* oracle: {network} stage, {polarity}, {ambient:g} C", f"VCC vcc 0 DC {vcc:.9g}"]
    if network == "divider":
        lines += [f"R1 vcc b {g(stage, 'r1'):.9g}", f"R2 b 0 {g(stage, 'r2'):.9g}"]
    elif network == "fixed":
        lines.append(f"RB vcc b {g(stage, 'rb'):.9g}")
    else:
        lines.append(f"RB c b {g(stage, 'rb'):.9g}")
    rc, re = g(stage, "rc"), g(stage, "re") or 0.0
    lines.append(f"RC vcc c {rc:.9g}" if rc > 0 else "VRC vcc c DC 0")
    lines.append(f"RE e 0 {re:.9g}" if re > 0 else "VRE e 0 DC 0")
    lines += ["VMC c cq DC 0", "VMB b bq DC 0", "Q1 cq bq e QO"]
    icbo = icbo25 * 2.0 ** ((ambient - 25.0) / 10.0)
    if icbo > 0:
        lines.append(f"ILK {'cq bq' if npn else 'bq cq'} DC {icbo:.9e}")
    lines += [oracle_model("QO", polarity, bf, vbe_on, vbe_ic, material), ".options TNOM=25",
              f".temp {ambient:g}",
              ".control", "op",
              "echo RESULT IC=$&i(vmc) IB=$&i(vmb) VC=$&v(c) VB=$&v(b) VE=$&v(e)",
              "quit 0", ".endc", ".end", ""]
    return "\n".join(lines)


def diode_vbe_netlist(model_card: str, model: str, polarity: str, current: float,
                      temps: tuple[float, ...]) -> str:
    """A diode-connected transistor (collector tied to base) fed ``current``; RESULT gives its
    |Vbe| at each temperature as V0, V1, ... (SPICE's own temperature model)."""
    npn = polarity == "npn"
    lines = ["* diode-connected transistor, Vbe against temperature",
             f"IF 0 b DC {current:.9e}" if npn else f"IF b 0 DC {current:.9e}",
             f"Q1 b b 0 {model}", model_card.strip(), ".options TNOM=25", ".control"]
    names = []
    for i, t in enumerate(temps):
        # A vector lives in its own plot; a shell variable survives the next op.
        lines += [f"set temp = {t:g}", "op", f"let v{i} = abs(v(b))", f"set sv{i} = $&v{i}"]
        names.append(f"V{i}=$sv{i}")
    lines += ["echo RESULT " + " ".join(names), "quit 0", ".endc", ".end", ""]
    return "\n".join(lines)
