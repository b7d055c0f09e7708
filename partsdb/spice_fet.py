"""SPICE cards for field-effect transistors (the FET half of :mod:`partsdb.spice`).

* JFET: ``.model NAME NJF|PJF(VTO= BETA=)``, the Shichman-Hodges JFET that
  :mod:`partsdb.jfet` solves: VTO = Vgs(off) (negative for both channels: SPICE flips the
  polarity of a PJF internally), BETA = Idss/Vp^2 at the typical part (geometric means of the
  windows), LAMBDA left at 0 (a record holds no output slope).
* MOSFET: a documented first-order level-1 card, approximate and said so in its comments:
  VTO from Vgs(th) (the middle of the window; sign by channel and mode), KP from Rds(on) at its
  test drive through the linear-region law 1/Rds = KP (W/L) (Vgs - Vt) with W = L = 1, so
  KP = 1/(Rds (Vgs - Vt)). With a body diode the card is a ``.subckt`` (drain gate source) of
  the MOSFET and its body diode (anode at the source for N-channel, at the drain for
  P-channel; default IS; TT = trr when the record has it, a rough stand-in for the reverse
  recovery).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from partsdb.jfet import JfetParams


def fet_model_name(designation: str) -> str:
    """A SPICE-safe name: letters, digits and underscores."""
    name = re.sub(r"[^A-Za-z0-9_]", "_", designation.strip().upper())
    return name or "F_UNNAMED"


def _g(value: float) -> str:
    return f"{value:.6g}"


def jfet_card(params: JfetParams) -> str:
    """A commented NJF/PJF ``.model`` for the typical part of ``params``."""
    idss, vp = params.corner("typ")
    beta = idss / (vp * vp)
    kind = "NJF" if params.polarity == "n" else "PJF"
    window = (f"Idss {_window(params.idss_min, params.idss_max)} A, "
              f"|Vgs(off)| {_window(params.vp_min, params.vp_max)} V")
    lines = [
        f"* partsdb model for {params.name} ({params.polarity.upper()}-channel JFET); from the "
        f"stored record: {window}",
        f"* typical part: Idss {_g(idss)} A, Vgs(off) {_g(-vp)} V (geometric means)",
        f"* VTO = Vgs(off) = {_g(-vp)} V; BETA = Idss/Vp^2 = {beta:.6e} A/V^2",
        "* LAMBDA = 0 (no output slope in the record); no capacitances; gate IS default",
        f".model {fet_model_name(params.name)} {kind}(VTO={_g(-vp)} BETA={beta:.6e})",
    ]
    return "\n".join(lines) + "\n"


def _window(low: float | None, high: float | None) -> str:
    return "..".join("?" if v is None else f"{v:g}" for v in (low, high))


@dataclass(frozen=True)
class MosfetCardParams:
    """What the level-1 card needs: magnitudes, SI units, None when unknown."""

    name: str
    polarity: str
    mode: str = "enhancement"
    vgs_th_min: float | None = None
    vgs_th_max: float | None = None
    rds_on: float | None = None
    rds_on_vgs: float | None = None
    body_diode: bool = False
    trr: float | None = None


VTO_DEFAULT = 2.0
"""|Vgs(th)| assumed when the record has none, V (common practice: power parts 2-4 V)."""
KP_DEFAULT = 1.0
"""KP when Rds(on) or its drive is unknown, A/V^2 (a placeholder, said so in the card)."""


def mosfet_card(p: MosfetCardParams) -> str:
    """A commented level-1 card (``.model``, or a ``.subckt`` with the body diode)."""
    name = fet_model_name(p.name)
    ends = [v for v in (p.vgs_th_min, p.vgs_th_max) if v is not None]
    lines = [f"* partsdb APPROXIMATE first-order model for {p.name} ({p.polarity.upper()}-"
             f"channel {p.mode} MOSFET): level 1, W = L = 1; not the maker's model",
             "* good for a DC operating point near the Rds(on) test drive; no capacitances, "
             "no subthreshold, no temperature model"]
    if ends:
        vt = sum(ends) / len(ends)
        lines.append(f"* |VTO| = {_g(vt)} V: middle of the Vgs(th) window "
                     f"{_window(p.vgs_th_min, p.vgs_th_max)} V")
    else:
        vt = VTO_DEFAULT
        lines.append(f"* |VTO| = {_g(vt)} V assumed (no Vgs(th) in the record; common practice)")
    # N frame: enhancement above 0, depletion below; a PMOS card mirrors the sign.
    vt_n = vt if p.mode == "enhancement" else -vt
    vto = vt_n if p.polarity == "n" else -vt_n
    if p.rds_on is not None and p.rds_on_vgs is not None and p.rds_on_vgs - vt_n > 0:
        overdrive = p.rds_on_vgs - vt_n
        kp = 1.0 / (p.rds_on * overdrive)
        lines.append(f"* KP = 1/(Rds(on) (Vgs - Vt)) = 1/({_g(p.rds_on)} x {_g(overdrive)}) "
                     f"from Rds(on) at |Vgs| {_g(p.rds_on_vgs)} V (linear region, "
                     "1/Rds = KP (W/L)(Vgs - Vt))")
    else:
        kp = KP_DEFAULT
        lines.append(f"* KP = {_g(kp)} placeholder: Rds(on) with its test drive not usable "
                     "from the record")
    kind = "NMOS" if p.polarity == "n" else "PMOS"
    model = f".model {name}_M {kind}(LEVEL=1 VTO={_g(vto)} KP={kp:.6e})"
    if not p.body_diode:
        lines.append(model.replace(f"{name}_M ", f"{name} ", 1))
        return "\n".join(lines) + "\n"
    tt = f" TT={p.trr:.6e}" if p.trr is not None else ""
    rough = "; TT = trr, rough" if tt else ""
    way = "source to drain" if p.polarity == "n" else "drain to source"
    lines += [f"* body diode, anode to cathode {way} (IS 1e-14 A, the SPICE default{rough})",
              f".subckt {name} d g s",
              f"M1 d g s s {name}_M",
              "D1 s d " + f"{name}_BD" if p.polarity == "n" else "D1 d s " + f"{name}_BD",
              model,
              f".model {name}_BD D(IS=1e-14{tt})",
              f".ends {name}"]
    return "\n".join(lines) + "\n"
