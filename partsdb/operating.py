"""Operating-point check: is a transistor safe at a given Vce, Ic and dissipation?

The engine behind ``partsdb check``. Grades each stress against its rating through
:func:`partsdb.derating.grade` (the grading rule and words the substitution ranking uses too:
ok / marginal / under-rated / unknown) and estimates the junction temperature through the
thermal chain of :mod:`partsdb.thermal`, the same chain the ranking's power check reads. The
small functions here (:func:`thermal_estimate`, :func:`grade_tj`, :func:`tj_ratio`,
:func:`hyperbola`) take floats or numpy arrays; the ranking does not call them (it evaluates
its own columns in :mod:`partsdb.ranking.checks`).

Formulas:

* Allowed dissipation: a free-air rating is derated linearly to the ambient,
  P(Ta) = Ptot x (Tjmax - Ta)/(Tjmax - 25); a case rating goes through the chain
  Rth j-c + Rth c-s + Rth s-a, capped at Ptot (standard datasheet practice; see thermal.py).
* Junction temperature: Tj = Ta + P x Rth(total) (same source).
* Power hyperbola: the points Vce x Ic = P(allowed); at a given Vce the largest collector
  current is P(allowed)/Vce (standard safe-operating-area reading; the second-breakdown part of
  a real SOA is not modelled, so a note says so for high-voltage points).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from partsdb.derating import BUILTIN_POLICIES, REL_TOL, STATUSES, UNDER, UNKNOWN, Policy, grade
from partsdb.device import Device, require_bipolar
from partsdb.thermal import (
    DEFAULT_CASE_TO_SINK,
    DEFAULT_FREE_AIR_CASE_TO_AMBIENT,
    allowed_power,
    free_air_case_to_ambient,
    junction_temperature,
    thermal_path,
)

DEFAULT_POLICY = BUILTIN_POLICIES["workshop"]


def _out(value: Any) -> Any:
    return value if np.ndim(value) else float(value)


def thermal_estimate(ptot: Any, tj_max: Any, ptot_ref: Any, ambient: Any, power: Any,
                     heatsink: Any | None = None, case_to_sink: float = DEFAULT_CASE_TO_SINK,
                     free_air: Any = DEFAULT_FREE_AIR_CASE_TO_AMBIENT) -> tuple[Any, Any, Any, Any]:
    """(Rth total, allowed power, Tj, Tc) for a mounting; arrays or floats.

    Tc is the case temperature, Ta + P x (Rth c-s + Rth s-a), for case-rated parts; for a
    free-air rating the case is not modelled and Tc is NaN.
    """
    rth = thermal_path(ptot, tj_max, ptot_ref, heatsink, case_to_sink, free_air)
    p_allowed = allowed_power(ptot, tj_max, ptot_ref, ambient, rth)
    tj = junction_temperature(ambient, power, rth)
    sink = np.asarray(np.nan if heatsink is None else heatsink, dtype=float)
    outside = np.where(np.isnan(sink), np.asarray(free_air, dtype=float), case_to_sink + sink)
    tc = np.where(np.asarray(ptot_ref) == "case",
                  np.asarray(ambient, dtype=float) + np.asarray(power, dtype=float) * outside,
                  np.nan)
    return _out(rth), _out(p_allowed), _out(tj), _out(tc)


def grade_tj(tj: Any, tj_max: Any, policy: Policy) -> Any:
    """Status word of a junction temperature: ok at or below the policy's Tj limit, marginal up
    to Tj max, under-rated beyond; NaN unknown (:func:`partsdb.derating.grade`)."""
    code = grade(tj, tj_max, limit=policy.tj_limit(np.asarray(tj_max, dtype=float)))
    return STATUSES[code] if np.ndim(code) == 0 else np.asarray(STATUSES)[code]


def tj_ratio(tj: Any, tj_max: Any, ambient: Any) -> Any:
    """Temperature rise used over rise available, (Tj - Ta)/(Tjmax - Ta).

    A ratio of Celsius readings (Tj/Tjmax) would mean nothing; the rise ratio equals
    P / P(allowed) through the same chain, so it reads like the other ratios.
    """
    t = np.asarray(tj, dtype=float)
    ta = np.asarray(ambient, dtype=float)
    span = np.asarray(tj_max, dtype=float) - ta
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.where(span > 0, (t - ta) / span, np.inf)
    return _out(out)


def hyperbola(vce: Any, ic: Any, p_allowed: Any) -> tuple[Any, Any, Any]:
    """(Ic allowed at this Vce, Vce allowed at this Ic, fraction of the hyperbola used).

    The fraction is Vce x Ic / P(allowed): 1.0 sits on the curve Vce x Ic = P(allowed).
    """
    v = np.asarray(vce, dtype=float)
    i = np.asarray(ic, dtype=float)
    p = np.asarray(p_allowed, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        ic_allowed = np.where(v > 0, p / v, np.inf)
        vce_allowed = np.where(i > 0, p / i, np.inf)
        fraction = np.where(p > 0, v * i / p, np.inf)
    return _out(ic_allowed), _out(vce_allowed), _out(fraction)



def worst_status(limits: Any) -> str:
    """The worst status over ``limits`` (under-rated > marginal > unknown > ok); unknown when
    there are none. Shared by the bipolar and the MOSFET operating-point checks."""
    order = {STATUSES[UNDER]: 3, "marginal": 2, STATUSES[UNKNOWN]: 1, "ok": 0}
    return max((lim.status for lim in limits), key=order.__getitem__,
               default=STATUSES[UNKNOWN])

@dataclass
class Limit:
    """One stress against its rating."""

    parameter: str
    """vce, ic, power or tj."""
    limit: float | None
    """The rating (Vceo, Ic max, allowed power at this temperature, Tj max)."""
    allowed: float | None
    """What the policy allows (factor x rating; for tj the policy's Tj limit)."""
    actual: float
    ratio: float | None
    """actual / limit (for tj the rise ratio, see :func:`tj_ratio`)."""
    status: str
    headroom: float | None
    """allowed - actual: how much more the policy would accept (negative when exceeded)."""
    unit: str
    note: str = ""

    def to_json(self) -> dict[str, Any]:
        return {"parameter": self.parameter, "limit": self.limit, "allowed": self.allowed,
                "actual": self.actual, "ratio": self.ratio, "status": self.status,
                "headroom": self.headroom, "unit": self.unit, "note": self.note}


@dataclass
class OperatingCheck:
    """Result of :func:`check_operating_point`."""

    device: str
    vce: float
    ic: float
    power: float
    ambient: float
    policy: Policy
    limits: list[Limit]
    tj_estimate: float | None
    tc_estimate: float | None
    rth_total: float | None
    p_allowed: float | None
    ic_allowed_at_vce: float | None
    hyperbola_fraction: float | None
    notes: list[str] = field(default_factory=list)

    @property
    def worst(self) -> str:
        """The worst status over all limits (under-rated > marginal > unknown > ok)."""
        return worst_status(self.limits)

    def to_json(self) -> dict[str, Any]:
        return {
            "device": self.device,
            "vce": self.vce,
            "ic": self.ic,
            "power": self.power,
            "ambient": self.ambient,
            "status": self.worst,
            "limits": [lim.to_json() for lim in self.limits],
            "tj_estimate": self.tj_estimate,
            "tc_estimate": self.tc_estimate,
            "rth_total": self.rth_total,
            "power_allowed": self.p_allowed,
            "hyperbola": {"ic_allowed_at_vce": self.ic_allowed_at_vce,
                          "fraction": self.hyperbola_fraction},
            "policy": {"name": self.policy.name, "source": self.policy.source,
                       **self.policy.factors()},
            "notes": list(self.notes),
        }


def _finite(x: float) -> float | None:
    return x if math.isfinite(x) else None


def _limit(parameter: str, actual: float, rating: float | None, factor: float,
           unit: str, note: str = "") -> Limit:
    if rating is None or not math.isfinite(rating):
        return Limit(parameter, None, None, actual, None, STATUSES[UNKNOWN], None, unit,
                     note or "no rating in the record")
    allowed = factor * rating
    ratio = actual / rating if rating > 0 else math.inf
    headroom = allowed - actual
    if abs(headroom) <= REL_TOL * max(abs(allowed), abs(actual)):
        headroom = 0.0  # at the limit up to rounding, as grade() compares (0.7 x 3 W vs 2.1 W)
    return Limit(parameter, rating, allowed, actual, _finite(ratio),
                 STATUSES[grade(actual, rating, factor)], headroom, unit, note)


def _check_number(name: str, value: float | None, allow_zero: bool = True,
                  allow_negative: bool = False) -> None:
    if value is None:
        return
    ok = isinstance(value, int | float) and math.isfinite(value)
    if ok and not allow_negative:
        ok = value >= 0 if allow_zero else value > 0
    if not ok:
        what = "a finite number" if allow_negative else (
            "a number >= 0" if allow_zero else "a positive number")
        raise ValueError(f"{name}: {value!r} is not valid; expected {what}")


def check_operating_point(device: Device, vce: float, ic: float, power: float | None = None,
                          ambient: float = 25.0, heatsink: float | None = None,
                          case_to_sink: float = DEFAULT_CASE_TO_SINK,
                          policy: Policy = DEFAULT_POLICY) -> OperatingCheck:
    """Grade Vce, Ic, dissipation and junction temperature of ``device`` at one point.

    ``vce`` and ``ic`` are magnitudes (V, A); ``power`` defaults to Vce x Ic; ``heatsink`` is
    the sink-to-ambient resistance in K/W (None: no sink). Raises ValueError naming a bad input.
    """
    require_bipolar(device, "the Vce/Ic operating-point check")
    _check_number("vce", vce)
    _check_number("ic", ic)
    _check_number("power", power)
    _check_number("ambient", ambient, allow_negative=True)
    _check_number("heatsink", heatsink)
    _check_number("case_to_sink", case_to_sink)
    notes: list[str] = []
    p = float(vce) * float(ic) if power is None else float(power)
    if power is None:
        notes.append("dissipation taken as Vce x Ic (base drive neglected)")

    tj_max, assumed = device.tj_max_or_default()
    if ambient >= tj_max:
        raise ValueError(f"ambient: {ambient:g} °C is at or above the Tj max of {device.designation}"
                         f" ({tj_max:g} °C); expected an ambient below Tj max")
    if assumed:
        notes.append(f"Tj max not in the record: {tj_max:g} °C assumed for material "
                     f"'{device.material}' (common practice)")
    limits = [_limit("vce", float(vce), device.vceo, policy.voltage, "V"),
              _limit("ic", float(ic), device.ic_max, policy.current, "A")]

    tj = tc = rth = p_allowed = ic_allowed = fraction = None
    if device.ptot is None:
        limits.append(_limit("power", p, None, policy.power, "W"))
        limits.append(Limit("tj", None, None, math.nan, None, STATUSES[UNKNOWN], None, "°C",
                            "no Ptot in the record, so no thermal resistance to estimate Tj"))
    else:
        ref = device.ptot_ref
        if ref not in ("ambient", "case"):
            ref = "ambient"
            notes.append("Ptot reference not in the record: taken as a free-air rating")
        free_air, guessed = free_air_case_to_ambient(device.package)
        if ref == "case" and heatsink is None:
            notes.append(f"no heat sink given: case-to-ambient {free_air:g} K/W in free air "
                         f"for {device.package or 'an unknown package'}"
                         + (" (assumed, common practice)" if guessed else " (common practice)"))
        if ref == "ambient" and heatsink is not None:
            notes.append("Ptot is a free-air rating: the heat sink is not credited")
        rth, p_allowed, tj, tc = thermal_estimate(device.ptot, tj_max, ref, ambient, p,
                                                  heatsink, case_to_sink, free_air)
        where = "ambient" if ref == "ambient" else "mounting"
        limits.append(_limit("power", p, p_allowed, policy.power, "W",
                             f"Ptot {device.ptot:g} W derated to {ambient:g} °C ({where})"))
        tj_allowed = float(policy.tj_limit(tj_max))
        limits.append(Limit("tj", tj_max, tj_allowed, tj,
                            _finite(tj_ratio(tj, tj_max, ambient)), grade_tj(tj, tj_max, policy),
                            tj_allowed - tj, "°C",
                            f"Tj = Ta + P x {rth:.3g} K/W" + (" (Tj max assumed)" if assumed
                                                                else "")))
        ic_allowed, _, fraction = hyperbola(vce, ic, p_allowed)
        ic_allowed, fraction = _finite(ic_allowed), _finite(fraction)
        if math.isnan(tc):
            tc = None
        if device.vceo is not None and vce > 0.5 * device.vceo and p > 0.25 * device.ptot:
            notes.append("high Vce at high power: second breakdown can limit below the power "
                         "hyperbola; check the maker's safe operating area")
    if ambient > tj_max:
        notes.append(f"ambient {ambient:g} °C is above Tj max {tj_max:g} °C")
    return OperatingCheck(device=device.designation, vce=float(vce), ic=float(ic), power=p,
                          ambient=float(ambient), policy=policy, limits=limits,
                          tj_estimate=None if tj is None else float(tj),
                          tc_estimate=tc, rth_total=rth, p_allowed=p_allowed,
                          ic_allowed_at_vce=ic_allowed, hyperbola_fraction=fraction, notes=notes)
