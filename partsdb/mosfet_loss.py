"""Power MOSFET at an operating point: losses, a self-consistent junction temperature, the heat
sink needed. The engine behind ``partsdb check`` for a MOSFET.

Formulas (each an estimate, stated as such in the output):

* Rds(on) at the drive: the record's figure holds at its own gate drive Vgs(spec). A weaker
  drive is scaled with the first-order (level-1) law the SPICE card uses, linear-region
  1/Rds = KP (Vgs - Vt): Rds(drive) = Rds(spec) (Vgs(spec) - Vt)/(Vdrive - Vt), with Vt the
  record's Vgs(th) max (the worst part). A stronger drive is not credited (the record's figure
  is kept). A drive at or below Vgs(th) max may not turn the part on at all.
* Rds(on) against temperature: Rds(Tj) = Rds(25 °C) (1 + a)^(Tj - 25) with a = 0.5 %/K
  (:data:`RDS_TEMPCO`; common practice: datasheets' normalised curves reach 1.5-2x at
  125-150 °C, and 1.005^100 = 1.65, 1.005^125 = 1.87). The substitute finder
  (:mod:`partsdb.ranking.fet_rules`) uses this same figure.
* Conduction loss I^2 Rds(on)(Tj), with I the RMS drain current while the part conducts (for a
  PWM load give the RMS over the period).
* Switching loss (rough, common practice): 1/2 V I (tr + tf) fsw with tr + tf about Qg/Igate,
  the time the driver needs to move the whole gate charge. The substitute finder uses this same
  function.
* Junction temperature: Tj = Ta + P(Tj) Rth(total) through the chain of :mod:`partsdb.thermal`
  (Rth j-c from the record, else from a case rating; plus case-to-sink and sink-to-ambient,
  or the outline's free-air figure; a free-air rating gives Rth j-a and no sink is credited).
  P rises with Tj, so Tj is the lowest fixed point, found by iterating from Ta; none (the
  iteration climbs without end) means thermal runaway on that mounting.
* Heat sink needed: the largest sink-to-ambient Rth that holds Tj at the policy's limit while
  dissipating P(Tj limit): (Tj limit - Ta)/P - Rth j-c - Rth c-s, rounded down to two
  significant digits as the ranking's sink figures are.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from partsdb.derating import BUILTIN_POLICIES, STATUSES, UNDER, UNKNOWN, Policy
from partsdb.errors import InvalidInput
from partsdb.operating import Limit, _limit, grade_tj, tj_ratio, worst_status
from partsdb.thermal import (
    DEFAULT_CASE_TO_SINK,
    T_RATING,
    allowed_power,
    case_to_ambient,
    free_air_case_to_ambient,
)

RDS_TEMPCO = 0.005
"""Relative rise of Rds(on) per kelvin, compounding (common practice; see the module text)."""
TJ_MAX_DEFAULT = 150.0
"""Tj max assumed for a silicon MOSFET whose record has none, °C (common practice)."""
RUNAWAY_RISE = 1000.0
"""Kelvin above the ambient at which the fixed-point search gives up (runaway)."""


class MosfetCheckError(InvalidInput):
    """A MOSFET check input that makes no sense: field, value, expectation."""


@dataclass(frozen=True)
class MosfetParams:
    """What the loss check needs of a MOSFET; SI units, None when the record has no value."""

    name: str
    polarity: str = "n"
    vds_max: float | None = None
    vgs_max: float | None = None
    id_max: float | None = None
    id_max_ref: str | None = None
    """"case" or "ambient": where Id max is stated at 25 °C (None: as ``ptot_ref``)."""
    ptot: float | None = None
    ptot_ref: str | None = None
    tj_max: float | None = None
    rth_jc: float | None = None
    rds_on: float | None = None
    """At 25 °C and the drive ``rds_on_vgs``, ohm."""
    rds_on_vgs: float | None = None
    vgs_th_max: float | None = None
    qg: float | None = None
    package: str | None = None


@dataclass(frozen=True)
class MosfetPoint:
    """The operating point: magnitudes."""

    vds: float
    """Drain-source voltage the part blocks and switches, V."""
    id: float
    """RMS drain current while conducting, A (also the switched current)."""
    drive: float
    """Gate-source drive while on, V."""
    fsw: float | None = None
    gate_current: float | None = None
    ambient: float = 25.0
    heatsink: float | None = None
    case_to_sink: float = DEFAULT_CASE_TO_SINK

    def __post_init__(self) -> None:
        for name in ("vds", "id", "fsw", "gate_current", "heatsink", "case_to_sink"):
            value = getattr(self, name)
            if value is None:
                continue
            if not (isinstance(value, int | float) and math.isfinite(value) and value >= 0):
                raise MosfetCheckError(f"{name}: {value!r} is not valid; expected a number >= 0")
        if not (isinstance(self.drive, int | float) and math.isfinite(self.drive)
                and self.drive > 0):
            raise MosfetCheckError(f"drive: {self.drive!r} is not valid; expected a gate drive "
                                   "magnitude above 0 V")
        if not (isinstance(self.ambient, int | float) and math.isfinite(self.ambient)):
            raise MosfetCheckError(f"ambient: {self.ambient!r} is not valid; expected °C")
        if self.fsw is not None and self.fsw > 0 and not self.gate_current:
            raise MosfetCheckError(f"gate_current: {self.gate_current!r} is not valid; expected "
                                   "the driver's gate current above 0 A with a switching "
                                   "frequency")


def rds_at_drive(rds: float, vgs_spec: float | None, vt: float | None,
                 drive: float) -> tuple[float | None, str | None]:
    """Rds(on) at ``drive`` (see the module text) and a note, or (None, why) when the drive
    does not turn the part on."""
    if vgs_spec is None or drive >= vgs_spec:
        return rds, None
    if vt is None:
        return rds, (f"drive {drive:g} V is below the record's Rds(on) test drive "
                     f"{vgs_spec:g} V and Vgs(th) is unknown: Rds(on) taken as the record's, "
                     "understated")
    if drive <= vt:
        return None, (f"drive {drive:g} V is at or below Vgs(th) max {vt:g} V: the part may "
                      "not turn on; no conduction loss can be estimated")
    scaled = rds * (vgs_spec - vt) / (drive - vt)
    return scaled, (f"Rds(on) scaled to the {drive:g} V drive: x ({vgs_spec:g} - {vt:g})/"
                    f"({drive:g} - {vt:g}) (first-order level-1 estimate, Vgs(th) max)")


def rds_at_temperature(rds25: float, tj: float) -> float:
    """Rds(on) at ``tj``: x (1 + RDS_TEMPCO)^(Tj - 25)."""
    return rds25 * (1.0 + RDS_TEMPCO) ** (tj - T_RATING)


def switching_loss(vds: float, i_d: float, qg: float, gate_current: float,
                   fsw: float) -> tuple[float, float]:
    """(loss W, tr + tf s): 1/2 V I (tr + tf) fsw with tr + tf = Qg/Igate (rough)."""
    t = qg / gate_current
    return 0.5 * vds * i_d * t * fsw, t


def self_consistent_tj(ambient: float, conduction25: float, other: float,
                       rth_total: float) -> float | None:
    """Lowest Tj with Tj = Ta + (Pc25 (1 + a)^(Tj - 25) + other) Rth; None on runaway.

    Iterated from Ta: each step is a larger Tj (the loss rises with it), so the sequence climbs
    to the lowest fixed point or, with none, past :data:`RUNAWAY_RISE`.
    """
    tj = ambient
    for _ in range(100_000):
        nxt = ambient + (rds_at_temperature(conduction25, tj) + other) * rth_total
        if nxt - ambient > RUNAWAY_RISE:
            return None
        if abs(nxt - tj) <= 1e-9:
            return nxt
        tj = nxt
    return None


def sink_round_down(rth: float) -> float:
    """Two significant digits, rounded down (3.95 K/W gives 3.9: the smaller sink still holds)."""
    step = 10.0 ** (math.floor(math.log10(rth)) - 1)
    return round(math.floor(rth / step + 1e-9) * step, 12)


@dataclass
class MosfetCheck:
    """Result of :func:`check_mosfet`."""

    device: str
    point: MosfetPoint
    policy: Policy
    limits: list[Limit]
    rds_on_drive: float | None
    rds_on_tj: float | None
    conduction: float | None
    """I^2 Rds(on) at 25 °C, W (the loss at Tj is this x Rds(Tj)/Rds(25 °C))."""
    switching: float | None
    switching_time: float | None
    power: float | None
    tj_estimate: float | None
    rth_total: float | None
    p_allowed: float | None
    heatsink_needed: float | None
    heatsink_verdict: str | None
    notes: list[str] = field(default_factory=list)

    @property
    def worst(self) -> str:
        return worst_status(self.limits)

    def to_json(self) -> dict[str, Any]:
        p = self.point
        return {
            "device": self.device, "kind": "mosfet", "vds": p.vds, "id": p.id,
            "drive": p.drive, "fsw": p.fsw, "gate_current": p.gate_current,
            "ambient": p.ambient, "heatsink": p.heatsink, "status": self.worst,
            "limits": [lim.to_json() for lim in self.limits],
            "losses": {"rds_on_drive": self.rds_on_drive, "rds_on_tj": self.rds_on_tj,
                       "rds_tempco": RDS_TEMPCO, "conduction_25c": self.conduction,
                       "conduction": (None if self.rds_on_tj is None
                                      else p.id ** 2 * self.rds_on_tj),
                       "switching": self.switching, "switching_time": self.switching_time,
                       "switching_is_estimate": True, "total": self.power},
            "tj_estimate": self.tj_estimate, "rth_total": self.rth_total,
            "power_allowed": self.p_allowed, "heatsink_needed": self.heatsink_needed,
            "heatsink_verdict": self.heatsink_verdict,
            "policy": {"name": self.policy.name, "source": self.policy.source,
                       **self.policy.factors()},
            "notes": list(self.notes),
        }


def _losses(params: MosfetParams, point: MosfetPoint,
            notes: list[str]) -> tuple[float | None, float | None, float, float | None]:
    """(Rds(on) at the drive, conduction loss at 25 °C or None, switching loss, tr + tf)."""
    conduction25 = None
    rds_drive = None
    if params.rds_on is None:
        notes.append("no Rds(on) in the record: no conduction loss")
    else:
        rds_drive, why = rds_at_drive(params.rds_on, params.rds_on_vgs, params.vgs_th_max,
                                      point.drive)
        if why:
            notes.append(why)
        if rds_drive is not None:
            conduction25 = point.id ** 2 * rds_drive
    sw, t_sw = 0.0, None
    if point.fsw:
        if params.qg is None:
            notes.append("no Qg in the record: the switching loss is not estimated")
        else:
            assert point.gate_current is not None
            sw, t_sw = switching_loss(point.vds, point.id, params.qg, point.gate_current,
                                      point.fsw)
            notes.append(f"switching loss is an estimate: 1/2 x Vds x Id x (tr + tf) x fsw "
                         f"with tr + tf = Qg/Igate = {t_sw * 1e9:.3g} ns (common practice)")
    return rds_drive, conduction25, sw, t_sw


def check_mosfet(params: MosfetParams, point: MosfetPoint,
                 policy: Policy = BUILTIN_POLICIES["workshop"]) -> MosfetCheck:
    """Grade Vds, Id, the drive, the dissipation and Tj of a MOSFET at ``point``."""
    notes: list[str] = []
    tj_max = params.tj_max
    if tj_max is None:
        tj_max = TJ_MAX_DEFAULT
        notes.append(f"Tj max not in the record: {tj_max:g} °C assumed (common practice)")
    if point.ambient >= tj_max:
        raise MosfetCheckError(f"ambient: {point.ambient:g} °C is at or above the Tj max of "
                               f"{params.name} ({tj_max:g} °C); expected an ambient below it")
    limits = [_limit("vds", point.vds, params.vds_max, policy.voltage, "V"),
              _limit("id", point.id, params.id_max, policy.current, "A"),
              _limit("vgs", point.drive, params.vgs_max, policy.voltage, "V",
                     "gate drive against Vgs max")]
    rds_drive, conduction25, sw, t_sw = _losses(params, point, notes)
    if params.id_max is not None and (params.id_max_ref or params.ptot_ref) == "case":
        notes.append("Id max is stated at a 25 °C case; with the case hotter the maker's "
                     "derating curve allows less (common practice)")
    if params.rds_on is not None and conduction25 is None:
        limits[2] = Limit("vgs", params.vgs_th_max, None, point.drive, None, STATUSES[UNDER],
                          None, "V", "drive at or below Vgs(th) max: may not turn on")

    ref = params.ptot_ref if params.ptot_ref in ("ambient", "case") else None
    if ref is None and params.rth_jc is not None:
        ref = "case"
    elif ref is None and params.ptot is not None:
        ref = "ambient"
        notes.append("Ptot reference not in the record: taken as a free-air rating")
    free_air, guessed = free_air_case_to_ambient(params.package)
    r_jref: float | None = None
    if ref == "case":
        r_jref = params.rth_jc if params.rth_jc is not None else (
            (tj_max - T_RATING) / params.ptot if params.ptot else None)
    elif ref == "ambient" and params.ptot:
        r_jref = (tj_max - T_RATING) / params.ptot
        if point.heatsink is not None:
            notes.append("Ptot is a free-air rating: the heat sink is not credited")
    result = MosfetCheck(params.name, point, policy, limits, rds_drive, None, conduction25,
                         sw if point.fsw else None, t_sw, None, None, None, None, None, None,
                         notes)
    if r_jref is None or conduction25 is None:
        why = ("no thermal resistance in the record (Ptot or Rth j-c)" if r_jref is None
               else "no conduction loss")
        limits.append(Limit("power", None, None, math.nan, None, STATUSES[UNKNOWN], None, "W",
                            why))
        limits.append(Limit("tj", tj_max, None, math.nan, None, STATUSES[UNKNOWN], None, "°C",
                            why))
        return result
    outside = 0.0
    if ref == "case":
        outside = float(case_to_ambient(point.heatsink, point.case_to_sink, free_air))
        if point.heatsink is not None:
            notes.append(f"thermal chain: Rth j-c {r_jref:.3g} + case to sink "
                         f"{point.case_to_sink:g} (mounting of {params.package or 'an unknown outline'}"
                         f") + sink {point.heatsink:g} = {r_jref + outside:.3g} K/W")
        else:
            notes.append(f"no heat sink given: case-to-ambient {free_air:g} K/W in free air for "
                         f"{params.package or 'an unknown package'}"
                         + (" (assumed, common practice)" if guessed else " (common practice)"))
    rth = r_jref + outside
    result.rth_total = rth
    ptot_for_chain = params.ptot if params.ptot else math.inf
    result.p_allowed = float(allowed_power(ptot_for_chain, tj_max, ref, point.ambient, rth))
    tj_limit = float(policy.tj_limit(tj_max))
    tj = self_consistent_tj(point.ambient, conduction25, sw, rth)
    if tj is None:
        notes.append("no steady junction temperature on this mounting: the loss rises with "
                     "Tj faster than the mounting removes it (thermal runaway)")
        at_max = conduction25 * (1.0 + RDS_TEMPCO) ** (tj_max - T_RATING) + sw
        limits.append(Limit("power", result.p_allowed, policy.power * result.p_allowed, at_max,
                            None, STATUSES[UNDER], None, "W",
                            f"thermal runaway; the loss at Tj max {tj_max:g} °C shown"))
        limits.append(Limit("tj", tj_max, tj_limit, math.nan, None, STATUSES[UNDER], None,
                            "°C", "thermal runaway: no steady Tj"))
    else:
        result.tj_estimate = tj
        assert rds_drive is not None
        result.rds_on_tj = rds_at_temperature(rds_drive, tj)
        result.power = conduction25 * (1.0 + RDS_TEMPCO) ** (tj - T_RATING) + sw
        limits.append(_limit("power", result.power, result.p_allowed, policy.power, "W",
                             f"at Tj {tj:.1f} °C; allowed through the chain at "
                             f"{point.ambient:g} °C"))
        limits.append(Limit("tj", tj_max, tj_limit, tj, tj_ratio(tj, tj_max, point.ambient),
                            grade_tj(tj, tj_max, policy), tj_limit - tj, "°C",
                            f"Tj = Ta + P(Tj) x {rth:.3g} K/W, Rds(on) +{RDS_TEMPCO:.1%}/K"))
    if ref == "case":
        p_at_limit = conduction25 * (1.0 + RDS_TEMPCO) ** (tj_limit - T_RATING) + sw
        need = (tj_limit - point.ambient) / p_at_limit - r_jref - point.case_to_sink \
            if p_at_limit > 0 else math.inf
        if need <= 0:
            result.heatsink_verdict = "no heat sink is enough"
        elif need + point.case_to_sink >= free_air:
            result.heatsink_verdict = "no heat sink needed"
        else:
            result.heatsink_needed = sink_round_down(need)
            result.heatsink_verdict = (f"needs a heat sink of {result.heatsink_needed:g} K/W "
                                       "or better")
    return result


def params_from_record(record: Any) -> MosfetParams:
    """MOSFET parameters from a stored device record (magnitudes: a P-channel part's signed
    ratings are taken by size; the worse Vgs(th) is the larger magnitude of the window)."""
    def mag(name: str) -> float | None:
        value = getattr(record, name, None)
        return None if value is None else abs(float(value))

    return MosfetParams(
        name=record.designation, polarity=record.polarity, vds_max=mag("vds"),
        vgs_max=mag("vgs_max"), id_max=mag("id_max"),
        id_max_ref=getattr(record, "id_max_ref", None), ptot=mag("ptot"),
        ptot_ref=getattr(record, "ptot_ref", None), tj_max=getattr(record, "tj_max", None),
        rth_jc=mag("rth_jc"), rds_on=mag("rds_on"), rds_on_vgs=mag("rds_on_vgs"),
        vgs_th_max=max((v for v in (mag("vgs_th_min"), mag("vgs_th_max")) if v is not None),
                       default=None), qg=mag("qg"), package=getattr(record, "package", None))
