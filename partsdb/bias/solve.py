"""Solving a stage: the operating point of one transistor in one network, by either model,
and the checks on the ambient (see :mod:`partsdb.bias` for the method and sources)."""

from __future__ import annotations

import math
from dataclasses import dataclass

from partsdb.bias.stage import (
    ACTIVE,
    AMBIENT_MAX,
    AMBIENT_MIN,
    CUT_OFF,
    CUT_OFF_FRACTION,
    MODELS,
    SATURATION,
    T_REFERENCE,
    VBE_FLOOR,
    VBE_TEMPCO,
    BiasError,
    Stage,
    TransistorParams,
    _number,
    leakage_at,
    saturation_current,
    thermal_voltage,
    vbe_at,
)


@dataclass
class Point:
    """One solved operating point (magnitudes)."""

    ic: float
    ib: float
    vb: float
    ve: float
    vc: float
    region: str

    @property
    def ie(self) -> float:
        return self.ic + self.ib

    @property
    def vce(self) -> float:
        return self.vc - self.ve

    @property
    def vbe(self) -> float:
        return self.vb - self.ve

    @property
    def power(self) -> float:
        """Device dissipation Vce Ic + Vbe Ib."""
        return self.vce * self.ic + self.vbe * self.ib


def _node_voltages(stage: Stage, ic: float, ib: float) -> tuple[float, float, float]:
    assert stage.re is not None
    ve = stage.re * (ic + ib)
    if stage.network == "collector-feedback":
        assert stage.rb is not None
        vc = stage.vcc - stage.rc * (ic + ib)
        vb = vc - stage.rb * ib
    else:
        vs, rs = stage.base_source()
        vc = stage.vcc - stage.rc * ic
        vb = vs - rs * ib
    return vb, ve, vc


def _solve2(a: tuple[float, float, float], b: tuple[float, float, float]) -> tuple[float, float]:
    """Solve a0 x + a1 y = a2, b0 x + b1 y = b2 (Cramer's rule)."""
    det = a[0] * b[1] - a[1] * b[0]
    return (a[2] * b[1] - a[1] * b[2]) / det, (a[0] * b[2] - a[2] * b[0]) / det


def solve_fixed_vbe(stage: Stage, beta: float, vbe: float, vce_sat: float,
                    icbo: float = 0.0, pair: bool = False) -> Point:
    """Constant-Vbe solution in the region the stage is actually in (unknowns Ib, Ic).

    ``icbo`` flows from collector to base inside the device (one transistor), or from collector
    to emitter when ``pair`` is set (a Darlington's own leakage, not amplified).
    """
    re, rc = stage.re or 0.0, stage.rc
    if stage.network == "collector-feedback":
        assert stage.rb is not None
        base = (rc + stage.rb + re, rc + re, stage.vcc - vbe)
        sat = (rc + re, rc + re, stage.vcc - vce_sat)
    else:
        vs, rs = stage.base_source()
        base = (rs + re, re, vs - vbe)
        sat = (re, rc + re, stage.vcc - vce_sat)
    if pair:
        # Ic = beta Ib + Icbo; the emitter carries Ib + Ic, so the base loop sees Icbo in Re.
        active = (-beta, 1.0, icbo)
        junction = 0.0
    else:
        active = (-beta, 1.0, (beta + 1.0) * icbo)  # Ic = beta Ib + (beta + 1) Icbo
        junction = icbo
    ib, ic = _solve2(base, active)
    if ib + junction <= 0:
        # Junction off: no base current into it; only the leakage flows (out of the base for
        # a single transistor, straight through for a pair).
        ib, ic = (-icbo, icbo) if not pair else (0.0, icbo)
        point = Point(ic, ib, *_node_voltages(stage, ic, ib), CUT_OFF)
        if point.vce < vce_sat:
            # More leakage than the collector circuit can pass: the collector bottoms at
            # Vce(sat) and the current is what the resistors allow.
            if stage.network == "collector-feedback":
                ic = (stage.vcc - vce_sat) / (rc + re) - ib
            else:
                ic = (stage.vcc - vce_sat - re * ib) / (rc + re)
            point = Point(ic, ib, *_node_voltages(stage, ic, ib), SATURATION)
        return _relabel(stage, point, vce_sat)
    point = Point(ic, ib, *_node_voltages(stage, ic, ib), ACTIVE)
    if point.vce < vce_sat:
        ib, ic = _solve2(base, sat)
        point = Point(ic, ib, *_node_voltages(stage, ic, ib), SATURATION)
    return _relabel(stage, point, vce_sat)


def _full_scale(stage: Stage) -> float:
    """The collector current the stage could carry with the transistor shorted, A."""
    span = stage.rc + (stage.re or 0.0)
    if span > 0:
        return stage.vcc / span
    _, rs = (0.0, stage.rb) if stage.network == "collector-feedback" else stage.base_source()
    return stage.vcc / (rs or 1.0)


def _relabel(stage: Stage, point: Point, vce_sat: float) -> Point:
    """The region from the solved currents and voltages: cut-off only when the collector
    carries next to nothing, saturated when Vce is at or below Vce(sat), else active."""
    if point.ic < CUT_OFF_FRACTION * _full_scale(stage):
        point.region = CUT_OFF
    elif point.region == SATURATION or point.vce < vce_sat:
        point.region = SATURATION
    else:
        point.region = ACTIVE
    return point


def _exp(x: float) -> float:
    return math.expm1(min(x, 700.0))


def solve_exponential(stage: Stage, beta: float, i_s: float, vt: float, vce_sat: float,
                      icbo: float = 0.0) -> Point:
    """Ebers-Moll (Gummel-Poon IS/BF only) solution by nested Brent root finding.

    Unknowns Vbe and Vbc. For a given Vbe the collector-node equation is monotonic in Vbc
    (one root); the base-node equation is then monotonic in Vbe. Both are bracketed, so
    :func:`scipy.optimize.brentq` always converges.
    """
    from scipy.optimize import brentq  # here, not at import: scipy costs ~0.7 s to load

    re, rc = stage.re or 0.0, stage.rc
    cfb = stage.network == "collector-feedback"
    vs, rs = (0.0, 0.0) if cfb else stage.base_source()

    def currents(vbe: float, vbc: float) -> tuple[float, float]:
        icc = i_s * _exp(vbe / vt)
        iec = i_s * _exp(vbc / vt)
        # BR = 1: Ic = Icc - Iec - Iec/BR, Ib = Icc/BF + Iec/BR; leakage source C -> B.
        return icc - 2.0 * iec + icbo, icc / beta + iec - icbo

    def collector_residual(vbc: float, vbe: float) -> float:
        ic, ib = currents(vbe, vbc)
        vc = re * (ic + ib) + vbe - vbc
        return stage.vcc - vc - rc * (ic + ib if cfb else ic)

    def vbc_for(vbe: float) -> float:
        lo, hi = -(stage.vcc + 10.0), vbe + 0.3
        for _ in range(100):
            if collector_residual(hi, vbe) > 0:
                break
            hi += 0.3
        return float(brentq(collector_residual, lo, hi, args=(vbe,), xtol=1e-14,
                            maxiter=500))

    def base_residual(vbe: float) -> float:
        vbc = vbc_for(vbe)
        ic, ib = currents(vbe, vbc)
        if cfb:
            assert stage.rb is not None
            return -vbc - stage.rb * ib
        vb = re * (ic + ib) + vbe
        return vs - vb - rs * ib

    hi = vt * math.log(1.0 + 1.0 / i_s)  # Vbe for 1 A: far above any small-signal bias
    for _ in range(100):
        if base_residual(hi) < 0:
            break
        hi += 0.2
    else:
        raise BiasError("stage", stage.to_json(), "a stage whose base current can be solved")
    vbe = float(brentq(base_residual, 0.0, hi, xtol=1e-14, maxiter=500))
    vbc = vbc_for(vbe)
    ic, ib = currents(vbe, vbc)
    vb, ve, vc = _node_voltages(stage, ic, ib)
    return _relabel(stage, Point(ic, ib, vb, ve, vc, ACTIVE), vce_sat)


def resolve_model(model: str, *params: TransistorParams) -> str:
    """The model actually used: ``auto`` picks exponential when every device allows it."""
    if model not in MODELS:
        raise BiasError("model", model, "one of " + ", ".join(MODELS))
    if model == "auto":
        return "exponential" if all(p.exponential_ok for p in params) else "fixed-vbe"
    if model == "exponential":
        for p in params:
            if not p.exponential_ok:
                raise BiasError("model", model, f"fixed-vbe for {p.name}: the exponential "
                                     "model needs Vbe(on) with its test current (single junction)")
    return model


def solve_point(stage: Stage, params: TransistorParams, model: str, ambient: float = 25.0,
                leakage: bool = True, beta: float | None = None) -> Point:
    """One operating point with ``model`` ("fixed-vbe" or "exponential") at ``ambient``."""
    b = params.hfe if beta is None else beta
    icbo = leakage_at(params, ambient) if leakage else 0.0
    if model == "exponential":
        return solve_exponential(stage, b, saturation_current(params, ambient),
                                 thermal_voltage(ambient), params.vce_sat, icbo)
    return solve_fixed_vbe(stage, b, vbe_at(params, ambient), params.vce_sat, icbo,
                           pair=params.kind == "darlington")


def stability_factor(stage: Stage, beta: float) -> float:
    """S = dIc/dIcbo with a fixed Vbe: (1 + beta)(1 + RB/RE)/(1 + beta + RB/RE).

    Boylestad & Nashelsky, *Electronic Devices and Circuit Theory*, ch. 4, bias stabilization
    (from memory); RB is the Thevenin resistance of the divider or the base resistor, and for
    collector feedback RE is replaced by Rc + Re (the same derivation, the feedback resistor
    carrying the emitter current). With no resistance in the loop S = beta + 1 (open base).
    """
    if stage.network == "collector-feedback":
        r_loop = stage.rc + (stage.re or 0.0)
        rb = stage.rb or 0.0
    else:
        r_loop = stage.re or 0.0
        rb = stage.base_source()[1]
    if r_loop <= 0:
        return beta + 1.0
    ratio = rb / r_loop
    return (1.0 + beta) * (1.0 + ratio) / (1.0 + beta + ratio)


def check_ambient(params: TransistorParams, ambient: float) -> None:
    """Refuse an ambient the bias model cannot answer for, with one line naming the value."""
    _number("ambient", ambient, low=-273.15, allow_low=False, expected="a temperature in °C")
    if params.tj_max is not None and ambient >= params.tj_max:
        raise BiasError("ambient", ambient,
                        f"an ambient below the Tj max of {params.name} ({params.tj_max:g} °C)")
    if not AMBIENT_MIN <= ambient <= AMBIENT_MAX:
        raise BiasError("ambient", ambient,
                        f"an ambient from {AMBIENT_MIN:g} to {AMBIENT_MAX:g} °C")
    vbe = vbe_at(params, ambient)
    if vbe < VBE_FLOOR:
        hot = T_REFERENCE + (params.vbe - VBE_FLOOR) / abs(VBE_TEMPCO) / (
            2.0 if params.kind == "darlington" else 1.0)
        raise BiasError("ambient", ambient,
                        f"an ambient below {hot:.0f} °C for {params.name}: there its Vbe(on) "
                        f"{params.vbe:g} V at 25 °C falls under {VBE_FLOOR * 1e3:g} mV at "
                        "-2 mV/K")


