"""What a stage does and what a swap does to it: the analysis with leakage and stability, the
resistor that restores the original's operating point, the report (see :mod:`partsdb.bias`)."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from partsdb.bias.solve import (
    Point,
    check_ambient,
    resolve_model,
    solve_point,
    stability_factor,
)
from partsdb.bias.stage import (
    ACTIVE,
    CUT_OFF,
    FIRM_FACTOR,
    SATURATION,
    STIFF_FACTOR,
    T_REFERENCE,
    BiasError,
    Stage,
    TransistorParams,
    leakage_at,
)
from partsdb.eseries import nearest


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
