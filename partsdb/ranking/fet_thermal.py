"""Dissipation and junction temperature of a field-effect substitute: the thermal chain and
the heat-sink rules of :mod:`partsdb.ranking.checks`, with the conduction loss of a MOSFET
computed at its own junction temperature.

The dissipation is ``--power`` when given (used as it is), else the conduction loss
Id^2 x Rds(on)(Tj) with Id = ``--id-peak`` (taken as the continuous current: a conservative
estimate) plus, with ``--fsw``, the switching-loss estimate (:mod:`partsdb.ranking.fet_rules`).
The mounting follows the bipolar rules: a free-air rating derates linearly; a case rating goes
through Rth j-c (the record's ``rth_jc``, else (Tj max - 25) / Ptot) + case-to-sink per outline
class + the sink (``--heatsink``; ``free-air`` the bare outline); with a dissipation and no sink
given, the largest sink that keeps Tj within the policy is reported (rounded down); with
neither, a case-rated original's own sink is assumed and the two parts are compared over
:data:`partsdb.thermal.SINK_SWEEP`, the worst ratio deciding.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass
from typing import Any

from partsdb.derating import OK, UNDER, UNKNOWN, Policy, grade
from partsdb.ranking.fet_rules import (
    RDS_ALPHA,
    junction_fixed_point,
    rds_on_at,
    switching_loss,
)
from partsdb.ranking.model import Stress
from partsdb.thermal import (
    SINK_SWEEP,
    chain_power,
    derated_power,
    free_air_case_to_ambient,
    heatsink_needed,
    mounting_resistance,
)


@functools.lru_cache(maxsize=256)
def _outline_figures(package: str | None) -> tuple[float, float]:
    """(case-to-sink, bare case-to-ambient) K/W of an outline (looked up once per outline: a
    ranking reads them for every candidate)."""
    return mounting_resistance(package), free_air_case_to_ambient(package)[0]


DEFAULT_FET_TJ_MAX = 150.0
"""Tj max assumed for a silicon FET with none recorded (common practice), flagged."""


@dataclass(frozen=True)
class Rating:
    """The thermal rating of one part as the checks read it."""

    ptot: float | None
    case: bool
    tj_max: float
    tj_assumed: bool
    rth: float | None
    """Junction-to-case (case rating) or junction-to-ambient (free-air rating), K/W."""
    mounting: float
    """Case-to-sink K/W of the outline class."""
    free_air: float
    """Case-to-ambient K/W of the bare outline."""

    @classmethod
    def of(cls, dev: Any) -> Rating:
        ptot = getattr(dev, "ptot", None)
        tj = getattr(dev, "tj_max", None)
        case = getattr(dev, "ptot_ref", None) == "case"
        tj_max = DEFAULT_FET_TJ_MAX if tj is None else float(tj)
        rth = getattr(dev, "rth_jc", None) if case else None
        if rth is None and ptot:
            rth = (tj_max - 25.0) / ptot
        mounting, free_air = _outline_figures(getattr(dev, "package", None))
        return cls(ptot, case, tj_max, tj is None, rth, mounting, free_air)

    def path(self, sink: float | None) -> float | None:
        """Junction-to-ambient K/W on a sink of ``sink`` K/W (None or inf: none)."""
        if self.rth is None:
            return None
        if not self.case:
            return self.rth
        if sink is None or sink == float("inf"):
            return self.rth + self.free_air
        return self.rth + self.mounting + sink

    def allowed(self, ambient: float, sink: float | None) -> float | None:
        """Largest dissipation at ``ambient`` on that sink (to Tj max, never above Ptot)."""
        if self.ptot is None:
            return None
        if not self.case:
            return float(derated_power(self.ptot, self.tj_max, ambient))
        rth = self.path(sink)
        assert rth is not None
        return float(chain_power(self.ptot, self.tj_max, ambient, rth))


@dataclass(frozen=True)
class Load:
    """What heats the part: a given power, or Id and Rds(on) (plus switching)."""

    power: float | None = None
    current: float | None = None
    rds_on: float | None = None
    switching: float = 0.0
    text: str = ""
    """How the dissipation was found, for the notes."""

    def at(self, tj: float) -> float | None:
        """Dissipation with the junction at ``tj`` °C."""
        if self.power is not None:
            return self.power
        if self.current is None or self.rds_on is None:
            return None
        return self.current ** 2 * rds_on_at(self.rds_on, tj) + self.switching

    @property
    def known(self) -> bool:
        return self.power is not None or (self.current is not None and self.rds_on is not None)


def load_of(dev: Any, stress: Stress, mosfet: bool) -> tuple[Load, str]:
    """The dissipation model of ``dev`` under ``stress``, and a note when the switching-loss
    estimate could not be made."""
    if stress.power is not None:
        return Load(power=stress.power, text=f"given dissipation {_w(stress.power)}"), ""
    if not mosfet or stress.id_peak is None:
        return Load(), ""
    rds = getattr(dev, "rds_on", None)
    if rds is None:
        return Load(current=stress.id_peak), ""
    sw, missing = 0.0, ""
    qg = getattr(dev, "qg", None)
    if stress.fsw is not None:
        need = {"--gate-current": stress.gate_current, "--vds-peak": stress.vds_peak, "Qg": qg}
        absent = [k for k, v in need.items() if v is None]
        if absent:
            missing = ("switching loss not estimated: " + ", ".join(absent) + " not given")
        else:
            assert stress.gate_current is not None and stress.vds_peak is not None and qg
            sw = switching_loss(stress.vds_peak, stress.id_peak, qg, stress.gate_current,
                                stress.fsw)
    text = (f"conduction Id^2 x Rds(on)(Tj) with Id {_a(stress.id_peak)}, Rds(on) "
            f"{rds:.4g} Ω at 25 °C x ({1 + RDS_ALPHA:g})^(Tj-25)")
    if sw:
        text += (f" + switching 1/2 x {stress.vds_peak:g} V x {_a(stress.id_peak)} x Qg/Ig "
                 f"x fsw = {_w(sw)} (estimate)")
    return Load(current=stress.id_peak, rds_on=rds, switching=sw, text=text), missing


def _w(p: float) -> str:
    return f"{p:.3g} W"


def _a(i: float) -> str:
    return f"{i:.3g} A"


@dataclass(frozen=True)
class Thermal:
    """The ptot and tj_max checks' values for one candidate."""

    ptot_need: float | None
    ptot_offered: float | None
    ptot_status: int
    ptot_note: str
    ptot_ratio: float | None
    tj_need: float | None
    tj_offered: float
    tj_status: int
    tj_note: str
    sink_needed: float | None = None
    runaway: bool = False
    basis: str = ""
    """stress (a dissipation), needed (sink to choose), sweep, original, none."""


def sink_mode(orig: Rating, stress: Stress, load: Load) -> str:
    """``given``, ``free-air``, ``needed`` (a dissipation, no sink given), ``sweep`` (a
    case-rated original, no dissipation, no sink given) or ``original`` (ratings compared in
    free air)."""
    if stress.heatsink is not None:
        return "free-air" if stress.free_air else "given"
    if load.known:
        return "needed"
    return "sweep" if orig.case and orig.ptot is not None else "original"


def thermal(orig: Rating, cand: Rating, stress: Stress, policy: Policy, load: Load) -> Thermal:
    """The ptot and tj_max checks of a candidate (module docstring)."""
    ta = stress.ambient
    mode = sink_mode(orig, stress, load)
    limit = float(policy.tj_limit(cand.tj_max))
    tj_off = cand.tj_max
    if cand.ptot is None or cand.rth is None:
        return Thermal(None, None, UNKNOWN, "Ptot not in the record", None, None, tj_off,
                       UNKNOWN, "no Tj estimate: Ptot not in the record", basis=mode)
    if ta >= cand.tj_max:
        note = (f"ambient {ta:g} °C is at or above Tj max {cand.tj_max:.0f} °C: the part can "
                "dissipate nothing there")
        return Thermal(None, 0.0, UNDER, note, None, None, tj_off, UNDER, note, basis=mode)
    if load.current is not None and not load.known:
        note = ("Rds(on) not in the record: the conduction loss at --id-peak cannot be "
                "estimated; give --power or read the datasheet")
        return Thermal(None, cand.allowed(ta, stress.heatsink), UNKNOWN, note, None, None,
                       tj_off, UNKNOWN, "no Tj estimate: the dissipation is not known",
                       basis="stress")
    if not load.known:
        return _compare_ratings(orig, cand, stress, mode)
    if mode == "needed" and cand.case:
        return _sink_needed(cand, stress, policy, load, limit)
    sink = stress.heatsink if mode == "given" else None
    rth = cand.path(sink)
    assert rth is not None
    allowed = cand.allowed(ta, sink)
    assert allowed is not None
    where = _where(cand, sink, rth)
    if load.power is not None:
        tj, power = ta + load.power * rth, load.power
    else:
        assert load.current is not None and load.rds_on is not None
        fixed = junction_fixed_point(ta, rth, load.current, load.rds_on, load.switching)
        if fixed is None:
            note = (f"thermal runaway: {load.text} through {where} has no steady junction "
                    "temperature (the loss rises with Tj faster than the path removes it)")
            return Thermal(None, allowed, UNDER, note, None, None, tj_off, UNDER, note,
                           runaway=True, basis="stress")
        tj, power = fixed
    status = grade(power, allowed, policy.power)
    ptot_note = (f"dissipation {_w(power)} ({load.text}) is {100 * power / allowed:.0f} % of "
                 f"allowed power {_w(allowed)} {where}; {policy.name} allows "
                 f"{policy.power:.0%}" if allowed > 0 else f"no power allowed {where}")
    tj_status = grade(tj, cand.tj_max, limit=limit)
    tj_note = (f"Tj = {ta:g} °C + {_w(power)} x {rth:.3g} K/W = {tj:.1f} °C"
               + (" (fixed point: Rds(on) at that Tj)" if load.power is None else "")
               + f"; {policy.name} allows {limit:.0f} °C, Tj max {cand.tj_max:.0f} °C")
    return Thermal(power, allowed, status, ptot_note, allowed / power if power else None,
                   tj, tj_off, tj_status, tj_note, basis="stress")


def _where(cand: Rating, sink: float | None, rth: float) -> str:
    if not cand.case:
        return f"in free air (Rth j-a {rth:.3g} K/W from the rating)"
    assert cand.rth is not None
    if sink is None or sink == float("inf"):
        return (f"on the bare outline (Rth j-c {cand.rth:.3g} + case-to-air "
                f"{cand.free_air:g} = {rth:.3g} K/W)")
    return (f"on a {sink:g} K/W sink (Rth j-c {cand.rth:.3g} + c-s {cand.mounting:g} + s-a "
            f"{sink:g} = {rth:.3g} K/W)")


def _sink_needed(cand: Rating, stress: Stress, policy: Policy, load: Load,
                 limit: float) -> Thermal:
    """No sink given and a dissipation: the largest sink that keeps Tj at the policy's limit
    (the conduction loss taken at that Tj)."""
    from partsdb.ranking.notes import sink_limit

    ta = stress.ambient
    assert cand.rth is not None and cand.ptot is not None
    power = load.at(limit)
    assert power is not None
    need = float(heatsink_needed(limit, ta, power, cand.rth, cand.mounting))
    ideal = max((limit - ta) / (cand.rth + cand.mounting), 0.0)
    what = f"{load.text}: {_w(power)} at Tj {limit:.0f} °C" if load.power is None else load.text
    if need <= 0:
        status, sink, text = UNDER, need, "even an ideal heat sink is not enough"
    elif need + cand.mounting >= cand.free_air:
        status, sink, text = OK, None, "no heat sink needed (the bare outline is enough)"
    else:
        status, sink = OK, need
        text = (f"needs a heat sink of {sink_limit(need)} K/W or better (Rth s-a <= "
                f"({limit:.0f} - {ta:g}) / P - Rth j-c {cand.rth:.3g} - c-s {cand.mounting:g})")
    note = f"{what}; {policy.name}'s Tj limit {limit:.0f} °C: {text}"
    tj_note = "no Tj estimate: the heat sink is not known; judged with the sink the Ptot check names"
    return Thermal(power, ideal, status, note, ideal / power if power else None, None,
                   cand.tj_max, status, tj_note, sink_needed=sink, basis="needed")


def _compare_ratings(orig: Rating, cand: Rating, stress: Stress, mode: str) -> Thermal:
    """No dissipation known: allowed powers compared, on the original's (unknown) sink over the
    sweep (worst ratio) or in free air."""
    ta = stress.ambient
    sinks: tuple[float | None, ...] = SINK_SWEEP if mode == "sweep" else \
        (stress.heatsink,) if mode == "given" else (None,)
    worst: tuple[float, float, float] | None = None
    for sink in sinks:
        o = orig.allowed(ta, sink)
        c = cand.allowed(ta, sink)
        if o is None or c is None or o <= 0:
            continue
        if worst is None or c / o < worst[0]:
            worst = (c / o, o, c)
    tj_status = OK if orig.tj_max <= cand.tj_max else UNDER
    tj_note = f"Tj max {cand.tj_max:.0f} °C against the original's {orig.tj_max:.0f} °C"
    if worst is None:
        return Thermal(None, cand.allowed(ta, None), UNKNOWN,
                       "no requirement (the original's Ptot is unknown and no dissipation "
                       "given)", None, orig.tj_max, cand.tj_max, tj_status, tj_note, basis="none")
    ratio, need, offered = worst
    status = grade(need, offered)
    where = ("on the original's heat sink (assumed, not given: compared over "
             + ", ".join(f"{x:g}" for x in SINK_SWEEP) + " K/W sink-to-ambient; worst case shown)"
             if mode == "sweep" else f"on a {stress.heatsink:g} K/W heat sink"
             if mode == "given" else "in free air")
    note = (f"allows {_w(offered)} against the original's {_w(need)} at {ta:g} °C {where}")
    return Thermal(need, offered, status, note, ratio, orig.tj_max, cand.tj_max, tj_status,
                   tj_note, basis=mode)

