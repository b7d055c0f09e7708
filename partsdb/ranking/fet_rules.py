"""The field-effect transistor rules of a substitution, as small pure functions on plain floats.

Each rule states its source (a textbook relation, or "common practice" where the trade's habit
has no written source); :mod:`partsdb.ranking.fet_checks` turns them into checks.

* **Gate overdrive** (:func:`overdrive_status`, common practice: logic-level against standard
  gate). A MOSFET's Rds(on) is specified at a gate-source voltage ``rds_on_vgs``. With the
  circuit's gate drive V_drive:
  V_drive >= rds_on_vgs: ``ok`` (the part is specified at this drive or below it);
  rds_on_vgs > V_drive >= 2 x Vgs(th)max: ``marginal`` (the channel is well on, but Rds(on) at
  this drive is not specified and is higher than the datasheet figure);
  V_drive < 2 x Vgs(th)max (or below rds_on_vgs with no Vgs(th) max stated): ``under-rated``
  (too little overdrive: the part may run in its linear region and overheat).
* **Rds(on) with temperature** (:func:`rds_on_at`, common practice for silicon power MOSFETs:
  Rds(on) reaches 1.5-2x its 25 °C value at 125-150 °C; modelled as
  Rds(on)(Tj) = Rds(on)(25 °C) x (1 + alpha)^(Tj - 25) with alpha = 0.005 /K, x 1.65 at 125 °C
  and x 1.87 at 150 °C). The figure is :data:`partsdb.mosfet_loss.RDS_TEMPCO`, the one
  ``partsdb check`` uses.
* **Junction temperature with conduction loss** (:func:`junction_fixed_point`): the loss
  depends on Tj and Tj on the loss, Tj = Ta + (I^2 Rds(on)(Tj) + P_other) x Rth; iterated from
  Tj = Ta to a fixed point (the map is increasing, so the iterates rise monotonically to the
  lowest fixed point when there is one). No fixed point below :data:`RUNAWAY_TJ` is thermal
  runaway (the loss grows faster with temperature than the path can carry it away).
* **Switching loss** (:func:`switching_loss`, common practice, a first estimate):
  P_sw = 1/2 x V x I x (t_rise + t_fall) x f_sw with t_rise + t_fall about Qg / I_gate (the time
  the driver needs to move the whole gate charge): :func:`partsdb.mosfet_loss.switching_loss`,
  the one ``partsdb check`` uses.
* **Windows on a log scale** (:func:`window_status`, as the hFE window): a candidate window
  inside the original's is ``ok``; one that overlaps it but reaches outside ``marginal``; one
  wholly outside by at most a factor :data:`WINDOW_GAP_FACTOR` ``marginal``; farther
  ``under-rated`` (common practice: a self-biased JFET stage tolerates the spread of its own
  type, not a different grade).
* **Self-biased JFET stage** (:func:`self_bias_current`): Shockley's square law,
  Id = Idss (1 - Vgs/Vp)^2 (textbook: Sedra & Smith, Microelectronic Circuits, JFET section,
  from memory). The original's stage is taken as designed at Vgs = Vp/2, Id = Idss/4 (the
  usual mid-point, common practice), so its source resistor is Rs = 2 |Vp| / Idss; the
  candidate with the same Rs settles where Id Rs = |Vgs| on its own square law.
"""

from __future__ import annotations

import math

from partsdb.derating import MARGINAL, OK, REL_TOL, UNDER, UNKNOWN
from partsdb.jfet import saturation_overdrive
from partsdb.mosfet_loss import RDS_TEMPCO
from partsdb.mosfet_loss import switching_loss as _switching_loss

RDS_ALPHA = RDS_TEMPCO
"""Per-kelvin rise of Rds(on) of a silicon power MOSFET (common practice, see the module
docstring)."""
RUNAWAY_TJ = 400.0
"""°C: an iteration passing this has no fixed point a silicon junction survives (runaway)."""
FIXED_POINT_TOL = 1e-6
"""K: the iteration stops when a step moves Tj less than this."""
FIXED_POINT_STEPS = 10_000
OVERDRIVE_FACTOR = 2.0
"""A drive at least this many times Vgs(th) max turns the channel well on (common practice)."""
WINDOW_GAP_FACTOR = 2.0
GATE_CHARGE_FACTOR = 1.5
"""Qg above this many times the original's loads the driver noticeably (common practice)."""
CISS_FACTOR = 1.5
"""Ciss above this many times the original's: more input loading (common practice)."""


def overdrive_status(drive: float | None, rds_on_vgs: float | None,
                     vgs_th_max: float | None) -> int:
    """Status code of a gate drive against a MOSFET's Rds(on) test voltage and Vgs(th) max
    (the rule of the module docstring; magnitudes, so P-channel values are given positive)."""
    if drive is None or rds_on_vgs is None:
        return UNKNOWN
    drive, rds_on_vgs = abs(drive), abs(rds_on_vgs)
    if drive >= rds_on_vgs * (1 - REL_TOL):
        return OK
    if vgs_th_max is not None and drive >= OVERDRIVE_FACTOR * abs(vgs_th_max) * (1 - REL_TOL):
        return MARGINAL
    return UNDER


def rds_on_at(rds_on_25: float, tj: float, alpha: float = RDS_ALPHA) -> float:
    """Rds(on) at junction temperature ``tj`` °C from its 25 °C value (module docstring)."""
    return rds_on_25 * (1.0 + alpha) ** (tj - 25.0)


def junction_fixed_point(ambient: float, rth: float, current: float, rds_on_25: float,
                         other_power: float = 0.0, alpha: float = RDS_ALPHA
                         ) -> tuple[float, float] | None:
    """(Tj °C, dissipation W) where Tj = Ta + (I^2 Rds(on)(Tj) + other) x Rth, or None for
    thermal runaway (no fixed point below :data:`RUNAWAY_TJ`)."""
    tj = ambient
    for _ in range(FIXED_POINT_STEPS):
        power = current * current * rds_on_at(rds_on_25, tj, alpha) + other_power
        nxt = ambient + power * rth
        if nxt > RUNAWAY_TJ:
            return None
        if abs(nxt - tj) < FIXED_POINT_TOL:
            return nxt, current * current * rds_on_at(rds_on_25, nxt, alpha) + other_power
        tj = nxt
    return None


def switching_loss(voltage: float, current: float, qg: float, gate_current: float,
                   fsw: float) -> float:
    """P_sw = 1/2 V I (t_r + t_f) f_sw with t_r + t_f = Qg / I_gate (module docstring), W."""
    return _switching_loss(voltage, current, qg, gate_current, fsw)[0]


def window_status(need: tuple[float | None, float | None],
                  offered: tuple[float | None, float | None]) -> tuple[int, float]:
    """(status code, sub-score) of an ``offered`` window against the ``need`` window on a log
    scale (module docstring); one end missing reads as a single value. Magnitudes compared."""
    n_lo, n_hi = need
    o_lo, o_hi = offered
    if n_lo is None and n_hi is None:
        return UNKNOWN, 0.5
    if o_lo is None and o_hi is None:
        return UNKNOWN, 0.25
    a_lo, a_hi = (abs(v) for v in _ends(n_lo, n_hi))
    b_lo, b_hi = (abs(v) for v in _ends(o_lo, o_hi))
    a_lo, a_hi = math.log(min(a_lo, a_hi)), math.log(max(a_lo, a_hi))
    b_lo, b_hi = math.log(min(b_lo, b_hi)), math.log(max(b_lo, b_hi))
    tol = REL_TOL
    gap = max(0.0, a_lo - b_hi, b_lo - a_hi)
    spill = max(0.0, a_lo - b_lo) + max(0.0, b_hi - a_hi)
    if gap > math.log(WINDOW_GAP_FACTOR) + tol:
        status = UNDER
    elif spill > tol:
        status = MARGINAL
    else:
        status = OK
    sub = min(max(1.0 - (gap + spill) / math.log(10.0), 0.0), 1.0)
    return status, sub


def _ends(lo: float | None, hi: float | None) -> tuple[float, float]:
    first = lo if lo is not None else hi
    last = hi if hi is not None else lo
    assert first is not None and last is not None
    return first, last


def geometric_centre(lo: float | None, hi: float | None) -> float | None:
    """The centre of a window on a log scale (a single end when only one is known)."""
    if lo is None and hi is None:
        return None
    a, b = _ends(lo, hi)
    return math.sqrt(abs(a) * abs(b))


def self_bias_current(idss: float, vp: float, rs: float) -> float:
    """Drain current of a self-biased JFET (gate at 0 V, source resistor ``rs``) by Shockley's
    law: the root of Id = Idss (1 - Id Rs / |Vp|)^2 with Id Rs < |Vp| (module docstring)."""
    # One solver for Shockley's law: the JFET stage module's (gate at 0 V).
    vp = abs(vp)
    overdrive = saturation_overdrive(0.0, rs, idss, vp)
    return idss * (overdrive / vp) ** 2


def implied_source_resistor(idss: float, vp: float) -> float:
    """Rs of a stage designed at Vgs = Vp/2, Id = Idss/4: 2 |Vp| / Idss (module docstring)."""
    return 2.0 * abs(vp) / idss


def ratio_status(ratio: float, ok_up_to: float, marginal_up_to: float | None = None) -> int:
    """Status of a "lower is better" ratio (candidate / original): ok up to ``ok_up_to``,
    marginal up to ``marginal_up_to`` (None: marginal beyond), else under-rated."""
    if ratio <= ok_up_to * (1 + REL_TOL):
        return OK
    if marginal_up_to is None or ratio <= marginal_up_to * (1 + REL_TOL):
        return MARGINAL
    return UNDER
