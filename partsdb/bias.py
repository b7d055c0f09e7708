"""Bias point of a common-emitter stage, and what swapping the transistor does to it.

Three bias networks (resistor names as a technician reads them off the board):

* ``divider``: R1 from the collector-side rail to the base, R2 from the base to the
  emitter-side rail, Rc, Re (Re must be given; 0 is accepted for a grounded emitter, though
  such a stage has no DC feedback and the stability rule then fails).
* ``collector-feedback``: Rb from the collector to the base, Rc, Re (Re may be 0).
* ``fixed``: Rb from the collector-side rail to the base, Rc, Re (Re may be 0).

Sign convention: every voltage and current is a magnitude. An NPN stage is solved as drawn; a
PNP stage is solved as its mirror image (swap every polarity), so Vb, Ve, Vc are measured from
the emitter-side rail towards the collector-side rail and the supply is the magnitude |Vcc|.

Two device models:

* ``fixed-vbe``: the exact Thevenin method with a constant Vbe (Boylestad & Nashelsky,
  *Electronic Devices and Circuit Theory*, ch. 4: Ib = (Vth - Vbe)/(Rth + (beta+1) Re)),
  solved as two linear equations per region: active (Ic = beta Ib), saturation
  (Vce = Vce(sat), Vbe unchanged) and cut-off (no base current).
* ``exponential``: the Ebers-Moll transport equations, i.e. the Gummel-Poon model with only IS
  and BF set (BR = 1, no Early effect, no high injection, no series resistances), which is
  exactly what ngspice solves for ``.model Q NPN(IS= BF=)``: Icc = IS (exp(Vbe/Vt) - 1),
  Iec = IS (exp(Vbc/Vt) - 1), Ic = Icc - 2 Iec, Ib = Icc/BF + Iec. IS comes from the
  record's Vbe(on) at its test current; Vt = kT/q (scipy.constants CODATA values). Saturation
  needs no separate equations here: the forward-biased collector junction is in the model.

Temperature: Vbe falls about 2 mV/K (common practice; DOMAIN notes), applied to Vbe(on) in both
models; collector-base leakage Icbo doubles every 10 K (common practice) and is modelled as a
current source from collector to base inside the device. Its effect on Ic is what the stage
lets through: the stage is solved with and without the source and the difference reported
(``leakage_ic``). With a fixed Vbe that difference is S x Icbo, the stability factor
S = (1 + beta)(1 + RB/RE)/(1 + beta + RB/RE) (Boylestad & Nashelsky, *Electronic Devices and
Circuit Theory*, ch. 4, bias stabilization; from memory), which is (beta + 1) x Icbo only
for an open base. A Darlington's stored Icbo is the pair's own collector leakage, measured at
its terminals: it is added to Ic as it is (a source from collector to emitter), not multiplied
by the pair's gain.

Ambient: from -55 °C to 300 °C, and below the part's Tj max (at or above it the stage is not a
bias question); outside that a clear error names the value.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field
from typing import Any

from partsdb.device import Device
from partsdb.errors import InvalidInput
from partsdb.eseries import nearest

NETWORKS: tuple[str, ...] = ("divider", "collector-feedback", "fixed")
MODELS: tuple[str, ...] = ("auto", "fixed-vbe", "exponential")
ACTIVE, SATURATION, CUT_OFF = "active", "saturation", "cut-off"

VCE_SAT_DEFAULT = 0.2
"""Vce below which a stage is called saturated when the record has no Vce(sat), V (common
practice for small-signal parts)."""
VCE_SAT_DARLINGTON = 0.9
"""Vce(sat) assumed for a Darlington whose record has none, V: the output transistor's Vbe
plus the driver's saturation, about 0.7 + 0.2 V (common practice)."""

AMBIENT_MIN, AMBIENT_MAX = -55.0, 300.0
"""Ambient range the bias model accepts, °C (-55 °C: the low end of military temperature
ranges, common practice; 300 °C: the highest Tj max a record may hold)."""
VBE_FLOOR = 0.05
"""Smallest Vbe(on) the -2 mV/K shift may reach before the ambient is refused, V (below it the
linear shift has lost its meaning; a choice made here)."""
CUT_OFF_FRACTION = 1e-4
"""A stage whose collector carries less than this fraction of Vcc/(Rc + Re) is cut off (the
exponential model has no sharp edge; a threshold chosen here)."""

# Vbe(on) at about 1 mA, 25 °C, when the record has none (DOMAIN notes; common practice).
VBE_DEFAULT: dict[str, float] = {"ge": 0.25, "si": 0.65, "other": 0.65}
VBE_DARLINGTON = 1.3
VBE_TEMPCO = -2e-3
"""dVbe/dT at constant current, V/K (common practice, silicon about -2 mV/K)."""

ICBO_GE_ASSUMED = 3e-6
"""Icbo at 25 °C assumed for a germanium part whose record has none, A (common practice: small
germanium transistors leak a few µA)."""
LEAKAGE_DOUBLING = 10.0
"""Kelvin per doubling of Icbo (common practice)."""

FIRM_FACTOR = 0.1
STIFF_FACTOR = 0.01
T_REFERENCE = 25.0


class BiasError(InvalidInput):
    """A stage or device input that makes no sense; names the field, value and expectation."""

    def __init__(self, field: str, value: object, expected: str) -> None:
        self.field = field
        self.value = value
        self.expected = expected
        what = "missing" if value is None else f"{value!r} is not valid"
        super().__init__(f"{field}: {what}; expected {expected}")


def alpha_from_beta(beta: float) -> float:
    """Common-base current gain, alpha = beta/(beta + 1)."""
    return beta / (beta + 1.0)


def beta_from_alpha(alpha: float) -> float:
    """Common-emitter current gain, beta = alpha/(1 - alpha)."""
    return alpha / (1.0 - alpha)


def thermal_voltage(celsius: float) -> float:
    """Vt = kT/q at ``celsius`` (25.85 mV at 27 °C)."""
    from scipy.constants import Boltzmann, elementary_charge, zero_Celsius

    return Boltzmann * (celsius + zero_Celsius) / elementary_charge


def _number(name: str, value: object, *, low: float = 0.0, allow_low: bool = True,
            expected: str | None = None) -> float:
    ok = isinstance(value, int | float) and not isinstance(value, bool) \
        and math.isfinite(float(value))
    if ok:
        v = float(value)  # type: ignore[arg-type]
        ok = v >= low if allow_low else v > low
    if not ok:
        raise BiasError(name, value, expected or (
            f"a number >= {low:g}" if allow_low else f"a number > {low:g}"))
    return float(value)  # type: ignore[arg-type]


@dataclass(frozen=True)
class Stage:
    """A common-emitter bias network; resistances in ohms, ``vcc`` the supply magnitude."""

    network: str
    vcc: float
    rc: float
    re: float | None
    r1: float | None = None
    r2: float | None = None
    rb: float | None = None

    def __post_init__(self) -> None:
        if self.network not in NETWORKS:
            raise BiasError("network", self.network, "one of " + ", ".join(NETWORKS))
        _number("vcc", self.vcc, allow_low=False, expected="a supply magnitude above 0 V")
        _number("rc", self.rc, expected="a resistance of 0 ohm or more")
        if self.re is None:
            raise BiasError("re", None, f"an emitter resistance for the {self.network} "
                            "network (0 for none)")
        _number("re", self.re, expected="a resistance of 0 ohm or more")
        if self.network == "divider":
            for name in ("r1", "r2"):
                _number(name, getattr(self, name), allow_low=False,
                        expected="a resistance above 0 ohm (the divider needs R1 and R2)")
            if self.rb is not None:
                raise BiasError("rb", self.rb, "no Rb for a divider network (use R1, R2)")
        else:
            _number("rb", self.rb, allow_low=False,
                    expected=f"a resistance above 0 ohm (the {self.network} network needs Rb)")
            for name in ("r1", "r2"):
                if getattr(self, name) is not None:
                    raise BiasError(name, getattr(self, name),
                                         f"no {name.upper()} for a {self.network} network "
                                         "(it uses Rb)")

    @property
    def fix_resistor(self) -> str:
        """The resistor a swap fix changes: R2 for a divider, Rb otherwise."""
        return "r2" if self.network == "divider" else "rb"

    def with_resistor(self, name: str, value: float) -> Stage:
        return dataclasses.replace(self, **{name: value})

    def base_source(self) -> tuple[float, float]:
        """Open-circuit voltage and source resistance driving the base (divider, fixed)."""
        if self.network == "divider":
            assert self.r1 is not None and self.r2 is not None
            return self.vcc * self.r2 / (self.r1 + self.r2), self.r1 * self.r2 / (self.r1 + self.r2)
        assert self.rb is not None
        return self.vcc, self.rb

    def to_json(self) -> dict[str, Any]:
        return {"network": self.network, "vcc": self.vcc, "r1": self.r1, "r2": self.r2,
                "rb": self.rb, "rc": self.rc, "re": self.re}


@dataclass(frozen=True)
class TransistorParams:
    """What the bias solution needs of a transistor; magnitudes, values at 25 °C."""

    name: str
    polarity: str
    hfe: float
    """beta used for the nominal solution (typical)."""
    vbe: float
    """Vbe(on) magnitude at ``vbe_ic`` (or about 1 mA when that is unknown), V."""
    vbe_ic: float | None = None
    """Test current of ``vbe``; with it the exponential model is available."""
    hfe_min: float | None = None
    hfe_max: float | None = None
    vce_sat: float = VCE_SAT_DEFAULT
    icbo: float = 0.0
    """Collector-base leakage at 25 °C, A."""
    material: str = "si"
    kind: str = "bjt"
    notes: tuple[str, ...] = ()
    tj_max: float | None = None
    """Maximum junction temperature, °C (None: not known; the ambient is then not checked)."""

    def __post_init__(self) -> None:
        if self.polarity not in ("npn", "pnp"):
            raise BiasError("polarity", self.polarity, "npn or pnp")
        _number("hfe", self.hfe, low=1.0, expected="a current gain of 1 or more")
        _number("vbe", self.vbe, allow_low=False, expected="a Vbe magnitude above 0 V")
        if self.vbe > 5:
            raise BiasError("vbe", self.vbe, "a Vbe magnitude up to 5 V")
        if self.vbe_ic is not None:
            _number("vbe_ic", self.vbe_ic, allow_low=False, expected="a test current above 0 A")
        for name in ("hfe_min", "hfe_max"):
            if getattr(self, name) is not None:
                _number(name, getattr(self, name), low=1.0, expected="a current gain >= 1")
        _number("vce_sat", self.vce_sat, expected="a voltage of 0 V or more")
        _number("icbo", self.icbo, expected="a leakage current of 0 A or more")

    @property
    def exponential_ok(self) -> bool:
        """True when IS can be derived: a measured Vbe at a known current, one junction."""
        return self.vbe_ic is not None and self.kind != "darlington"

    @property
    def gain_window(self) -> tuple[float, float, float]:
        """(min, typical, max) beta; a missing end falls back to the typical value."""
        lo = self.hfe_min if self.hfe_min is not None else self.hfe
        hi = self.hfe_max if self.hfe_max is not None else self.hfe
        return lo, self.hfe, hi


def typical_hfe(hfe_min: float | None, hfe_max: float | None) -> float | None:
    """Geometric mean of the hFE window, or whichever end exists (common practice: hFE spreads
    by ratios, so the middle of the window is the geometric mean)."""
    if hfe_min is not None and hfe_max is not None:
        return math.sqrt(hfe_min * hfe_max)
    return hfe_min if hfe_min is not None else hfe_max


def params_from_device(device: Device) -> TransistorParams:
    """The bias parameters of a stored device, with what had to be assumed in ``notes``."""
    notes: list[str] = []
    hfe = typical_hfe(device.hfe_min, device.hfe_max)
    if hfe is None:
        raise BiasError("hfe_min", None, f"an hFE window in the record of "
                                              f"{device.designation} (or give --hfe)")
    if device.vbe_on is not None:
        vbe, vbe_ic = device.vbe_on, device.vbe_ic
    else:
        vbe = VBE_DARLINGTON if device.kind == "darlington" else VBE_DEFAULT.get(
            device.material, 0.65)
        vbe_ic = None
        notes.append(f"{device.designation}: Vbe(on) not in the record, {vbe:g} V assumed "
                     f"for {device.kind} {device.material} (common practice)")
    if device.vce_sat is not None:
        vce_sat = device.vce_sat
    elif device.kind == "darlington":
        vce_sat = VCE_SAT_DARLINGTON
        notes.append(f"{device.designation}: Vce(sat) not in the record, {vce_sat:g} V assumed "
                     "for a Darlington (output Vbe plus driver saturation; common practice)")
    else:
        vce_sat = VCE_SAT_DEFAULT
    if device.icbo is not None:
        icbo = device.icbo
    elif device.material == "ge":
        icbo = ICBO_GE_ASSUMED
        notes.append(f"{device.designation}: Icbo not in the record, {ICBO_GE_ASSUMED * 1e6:g} µA "
                     "at 25 °C assumed for germanium (common practice)")
    else:
        icbo = 0.0  # silicon leaks nanoamps: negligible for bias
    return TransistorParams(name=device.designation, polarity=device.polarity, hfe=hfe, vbe=vbe,
                            vbe_ic=vbe_ic, hfe_min=device.hfe_min, hfe_max=device.hfe_max,
                            vce_sat=vce_sat, icbo=icbo, material=device.material,
                            kind=device.kind, notes=tuple(notes),
                            tj_max=device.tj_max_or_default()[0])


def vbe_at(params: TransistorParams, ambient: float) -> float:
    """Vbe(on) at ``ambient``: the 25 °C value shifted by -2 mV/K (common practice)."""
    scale = 2.0 if params.kind == "darlington" else 1.0  # two junctions in series
    return params.vbe + scale * VBE_TEMPCO * (ambient - T_REFERENCE)


def leakage_at(params: TransistorParams, ambient: float) -> float:
    """Icbo at ``ambient``, doubling every 10 K from its 25 °C value (common practice)."""
    return params.icbo * 2.0 ** ((ambient - T_REFERENCE) / LEAKAGE_DOUBLING)


def saturation_current(params: TransistorParams, ambient: float) -> float:
    """IS such that IS (exp(Vbe/Vt) - 1) equals the test current at ``ambient``."""
    ic_test = params.vbe_ic if params.vbe_ic is not None else 1e-3
    return ic_test / math.expm1(vbe_at(params, ambient) / thermal_voltage(ambient))


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


@dataclass
class StageResult:
    """The analysed stage for one device."""

    device: str
    polarity: str
    model: str
    point: Point
    beta: float
    icbo: float
    ic_hfe_min: float
    ic_hfe_typ: float
    ic_hfe_max: float
    stability: dict[str, Any]
    notes: list[str] = field(default_factory=list)
    params: TransistorParams | None = None
    leakage_ic: float = 0.0
    """Ic with the leakage minus Ic without it (both solved), A."""
    """The device parameters solved with (for netlists and fixes)."""

    def to_json(self) -> dict[str, Any]:
        p = self.point
        return {"device": self.device, "polarity": self.polarity, "ic": p.ic, "ib": p.ib,
                "ie": p.ie, "vce": p.vce, "vb": p.vb, "ve": p.ve, "vc": p.vc, "vbe": p.vbe,
                "power": p.power, "region": p.region, "model": self.model, "beta": self.beta,
                "icbo": self.icbo, "leakage_ic": self.leakage_ic,
                "ic_hfe_min": self.ic_hfe_min,
                "ic_hfe_typ": self.ic_hfe_typ, "ic_hfe_max": self.ic_hfe_max,
                "stability": self.stability, "notes": list(self.notes)}


def stability(stage: Stage, beta_low: float, ic_low: float, ic_high: float) -> dict[str, Any]:
    """The divider rule of thumb and the Ic spread over the hFE window.

    Rule (Malvino, *Electronic Principles*, voltage-divider bias; from memory): the divider is
    "firm" when Rth <= 0.1 beta Re and "stiff" when Rth <= 0.01 beta Re; beta is the lowest
    of the window, the worst case.
    """
    out: dict[str, Any] = {"ic_spread": ic_high / ic_low if ic_low > 0 else math.inf}
    if stage.network != "divider":
        out.update(rule=None, met=None)
        return out
    _, rth = stage.base_source()
    assert stage.re is not None
    firm = FIRM_FACTOR * beta_low * stage.re
    grade = ("stiff" if rth <= STIFF_FACTOR * beta_low * stage.re
             else "firm" if rth <= firm else "not firm")
    out.update(rule="Rth <= 0.1 x beta(min) x Re (Malvino, from memory)", rth=rth,
               limit=firm, met=rth <= firm, grade=grade)
    return out


def analyse_stage(stage: Stage, params: TransistorParams, model: str = "auto",
                  ambient: float = 25.0, leakage: bool = True) -> StageResult:
    """Solve the stage at the typical, lowest and highest hFE of ``params``."""
    check_ambient(params, ambient)
    used = resolve_model(model, params)
    point = solve_point(stage, params, used, ambient, leakage)
    lo, typ, hi = params.gain_window
    ic_lo = solve_point(stage, params, used, ambient, leakage, beta=lo).ic
    ic_hi = solve_point(stage, params, used, ambient, leakage, beta=hi).ic
    notes = list(params.notes)
    icbo = leakage_at(params, ambient) if leakage else 0.0
    leakage_ic = 0.0
    if icbo > 0:
        leakage_ic = point.ic - solve_point(stage, params, used, ambient, False).ic
        how = ("the pair's own leakage, not amplified" if params.kind == "darlington"
               else f"stability factor S {stability_factor(stage, typ):.3g}")
        notes.append(f"{params.name}: leakage Icbo {icbo * 1e6:.3g} µA at {ambient:g} °C "
                     f"raises Ic by {leakage_ic * 1e3:.3g} mA (the stage solved with and "
                     f"without it; {how})")
    if params.hfe_min is None or params.hfe_max is None:
        notes.append(f"{params.name}: hFE window incomplete; Ic spread understated")
    stab = stability(stage, lo, ic_lo, ic_hi)
    stab["s_icbo"] = stability_factor(stage, typ)  # at the typical beta
    return StageResult(device=params.name, polarity=params.polarity, model=used, point=point,
                       beta=typ, icbo=icbo, ic_hfe_min=ic_lo, ic_hfe_typ=point.ic,
                       ic_hfe_max=ic_hi, stability=stab,
                       notes=notes, params=params, leakage_ic=leakage_ic)


@dataclass
class FixOption:
    """A preferred resistor value and the operating point it gives, at the typical hFE and at
    each end of the substitute's hFE window."""

    value: float
    ic: float
    vce: float
    region: str
    ic_hfe_min: float = math.nan
    region_hfe_min: str = ""
    ic_hfe_max: float = math.nan
    region_hfe_max: str = ""

    def to_json(self) -> dict[str, Any]:
        return {"value": self.value, "ic": self.ic, "vce": self.vce, "region": self.region,
                "ic_hfe_min": self.ic_hfe_min, "region_hfe_min": self.region_hfe_min,
                "ic_hfe_max": self.ic_hfe_max, "region_hfe_max": self.region_hfe_max}


FIX_TARGET = (f"the original's operating point at {T_REFERENCE:g} °C without leakage "
              "(the stage's design point)")


@dataclass
class Fix:
    """The one resistor to change after a swap, to bring Ic back to the original."""

    resistor: str
    original_value: float
    exact: float
    target_ic: float
    e12: FixOption
    e24: FixOption
    target: str = FIX_TARGET

    def to_json(self) -> dict[str, Any]:
        return {"resistor": self.resistor, "original_value": self.original_value,
                "exact": self.exact, "target_ic": self.target_ic, "target": self.target,
                "e12": self.e12.to_json(), "e24": self.e24.to_json()}


def solve_fix(stage: Stage, params: TransistorParams, target_ic: float, model: str,
              ambient: float = 25.0, leakage: bool = True) -> Fix | None:
    """The value of R2 (divider) or Rb that gives ``target_ic`` with ``params``; None when
    no value within a factor of 1000 of the present one does (e.g. the target is beyond
    saturation)."""
    from scipy.optimize import brentq

    name = stage.fix_resistor
    r0 = float(getattr(stage, name))

    def miss(log_r: float) -> float:
        point = solve_point(stage.with_resistor(name, math.exp(log_r)), params, model,
                            ambient, leakage)
        return point.ic / target_ic - 1.0

    lo, hi = math.log(r0 / 1e3), math.log(r0 * 1e3)
    f_lo, f_hi = miss(lo), miss(hi)
    if f_lo * f_hi > 0:
        return None
    log_exact = float(brentq(miss, lo, hi, xtol=1e-12, rtol=1e-14, maxiter=500))
    exact = math.exp(log_exact)

    lo, _, hi = params.gain_window

    def option(series: str) -> FixOption:
        value = nearest(exact, series)
        fixed = stage.with_resistor(name, value)
        p = solve_point(fixed, params, model, ambient, leakage)
        p_lo = solve_point(fixed, params, model, ambient, leakage, beta=lo)
        p_hi = solve_point(fixed, params, model, ambient, leakage, beta=hi)
        return FixOption(value, p.ic, p.vce, p.region, p_lo.ic, p_lo.region, p_hi.ic,
                         p_hi.region)

    return Fix(name, r0, exact, target_ic, option("E12"), option("E24"))


@dataclass
class BiasReport:
    """A stage analysed for its original device and, optionally, a substitute with a fix."""

    stage: Stage
    original: StageResult
    substitute: StageResult | None = None
    fix: Fix | None = None
    notes: list[str] = field(default_factory=list)

    @property
    def ic_change(self) -> float | None:
        """Relative change of Ic, substitute vs original."""
        if self.substitute is None or self.original.point.ic == 0:
            return None
        return self.substitute.point.ic / self.original.point.ic - 1.0

    @property
    def vce_change(self) -> float | None:
        if self.substitute is None:
            return None
        return self.substitute.point.vce - self.original.point.vce

    def to_json(self) -> dict[str, Any]:
        out: dict[str, Any] = {"network": self.stage.network, "stage": self.stage.to_json(),
                               "original": self.original.to_json()}
        if self.substitute is not None:
            sub = self.substitute.point
            out["substitute"] = self.substitute.to_json()
            out["shift"] = {"ic_change": self.ic_change, "vce_change": self.vce_change,
                            "saturates": sub.region == SATURATION,
                            "cuts_off": sub.region == CUT_OFF}
            out["fix"] = None if self.fix is None else self.fix.to_json()
        out["notes"] = list(self.notes)
        return out


def analyse_bias(stage: Stage, original: TransistorParams,
                 substitute: TransistorParams | None = None, model: str = "auto",
                 ambient: float = 25.0, leakage: bool = True) -> BiasReport:
    """Analyse the stage with ``original``; with ``substitute``, predict the swap and its fix.

    Both devices are solved with the same model (exponential only when both allow it), so the
    shift reflects the parts, not a change of model.
    """
    devices = (original,) if substitute is None else (original, substitute)
    used = resolve_model(model, *devices)
    notes: list[str] = []
    if model == "auto" and used == "fixed-vbe":
        notes.append("fixed-Vbe model: the exponential model needs Vbe(on) with its test "
                     "current for every device")
    if substitute is not None and substitute.polarity != original.polarity:
        raise BiasError("substitute", substitute.name,
                             f"a {original.polarity.upper()} like {original.name}")
    for device in devices:
        check_ambient(device, ambient)
    orig = analyse_stage(stage, original, used, ambient, leakage)
    report = BiasReport(stage, orig, notes=notes)
    if substitute is None:
        return report
    report.substitute = analyse_stage(stage, substitute, used, ambient, leakage)
    # The fix aims at the design point: the original at 25 °C without its leakage, so a
    # germanium original's leakage-inflated current at a warm ambient is not copied.
    design = solve_point(stage, original, used, T_REFERENCE, leakage=False)
    if design.region != ACTIVE:
        notes.append(f"the original stage is in {design.region} at {T_REFERENCE:g} °C without "
                     "leakage: no fix computed (restoring its Ic is not a bias target)")
        return report
    report.fix = solve_fix(stage, substitute, design.ic, used, ambient, leakage)
    if report.fix is None:
        notes.append(f"no value of {stage.fix_resistor.upper()} restores Ic "
                     f"{design.ic * 1e3:.3g} mA ({FIX_TARGET}) with {substitute.name}")
    return report


def predict_swap(stage: Stage, original: TransistorParams, substitute: TransistorParams,
                 model: str = "auto", ambient: float = 25.0, leakage: bool = True) -> BiasReport:
    """What replacing ``original`` by ``substitute`` does to the stage, and the fix."""
    return analyse_bias(stage, original, substitute, model, ambient, leakage)
