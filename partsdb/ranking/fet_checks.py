"""The checks of a field-effect substitute against its original, one candidate at a time.

Records are objects with the device attributes (None when not given). Every check has a need,
the candidate's value, a ratio (1 or more when the need is met: offered / need for ratings that
should be high, need / offered for Rds(on), Qg, trr, Ciss and noise, which should be low), a
status graded through :func:`partsdb.derating.grade` or a rule of
:mod:`partsdb.ranking.fet_rules`, and a note a technician can check by hand.

MOSFET: vds, id_max, ptot and tj_max (:mod:`partsdb.ranking.fet_thermal`), drive (the overdrive
rule), rds_on, vgs_max, qg, body_diode, trr, package, pinout. JFET: vds, idss (with the shift
of a self-biased stage), vgs_off, yfs, noise, ciss, ptot, tj_max, package, pinout.

Without a stress the need is the original's rating (a lower one is under-rated); with one
(``--vds-peak``, ``--id-peak``, ``--drive``, ``--power``) the stress is the need, graded by the
policy's factors. Rds(on) above the original's: marginal (under-rated beyond twice it when no
``--id-peak`` lets the thermal check judge the loss); Qg above 1.5 x the original's: marginal,
flagged with the ratio; Ciss above 1.5 x, trr, noise or |yfs| worse than the original's:
marginal (|yfs| below half: under-rated); a missing body diode where the original has one:
under-rated (bridges and motor drives conduct through it). Common practice, all of them.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from partsdb.derating import MARGINAL, OK, STATUSES, UNDER, UNKNOWN, Policy, grade
from partsdb.ranking.checks import headroom_score_plain, headroom_score_stressed
from partsdb.ranking.fet_rules import (
    CISS_FACTOR,
    GATE_CHARGE_FACTOR,
    OVERDRIVE_FACTOR,
    geometric_centre,
    implied_source_resistor,
    overdrive_status,
    ratio_status,
    self_bias_current,
    window_status,
)
from partsdb.ranking.fet_thermal import Rating, load_of, thermal
from partsdb.ranking.model import (
    FET_LABELS,
    SUB_NO_NEED,
    SUB_UNKNOWN_FIT,
    SUB_UNKNOWN_RATING,
    Stress,
)
from partsdb.ranking.notes import fit_note, fmt, outline_key
from partsdb.ranking.result import Check, Flag

MOSFET_WEIGHTS: dict[str, float] = {
    "vds": 20, "id_max": 15, "ptot": 15, "tj_max": 5, "drive": 10, "rds_on": 10, "vgs_max": 5,
    "qg": 4, "body_diode": 5, "trr": 2, "package": 8, "pinout": 4}
"""Weights of the MOSFET checks in the score (stock and history come from the configured
weights); common practice: the breakdown, current and thermal ratings first."""
JFET_WEIGHTS: dict[str, float] = {
    "vds": 15, "idss": 20, "vgs_off": 15, "yfs": 10, "noise": 6, "ciss": 4, "ptot": 8,
    "tj_max": 3, "package": 8, "pinout": 4}
"""Weights of the JFET checks: the bias windows first (a small-signal part)."""
PRIMARY = frozenset({"vds", "id_max", "ptot", "idss"})
"""Unknown where the need is known: the part cannot be confirmed (unverified)."""

LABELS = FET_LABELS


NOISE_FIELD = "en"
"""The device attribute holding the noise figure compared (lower is better)."""


@dataclass
class Row:
    """One check of one candidate, with its sub-score and its need/offered as shown."""

    check: Check
    sub: float
    shown: tuple[str, str]
    applicable: bool


@dataclass
class Assessment:
    rows: list[Row] = field(default_factory=list)
    flags: list[Flag] = field(default_factory=list)


def _v(dev: Any, name: str) -> Any:
    return getattr(dev, name, None)


def _flag_value(value: Any) -> bool | None:
    if value is None or isinstance(value, bool):
        return value
    text = str(value).strip().lower()
    return True if text in ("yes", "y", "true", "1") else False if text in ("no", "n", "false",
                                                                           "0") else None


def _sub(status: int, h: float | None, plain: bool = True, factor: float = 1.0) -> float:
    if status == UNKNOWN:
        return SUB_UNKNOWN_RATING
    if h is None:
        return 1.0 if status == OK else 0.5 if status == MARGINAL else 0.1
    arr = np.array([h], dtype=float)
    out = headroom_score_plain(arr) if plain else headroom_score_stressed(arr, factor)
    return float(out[0])


def _none(name: str, offered: Any) -> Row:
    unit = LABELS[name][1]
    return Row(Check(name, None, offered, None, STATUSES[UNKNOWN],
                     "no requirement (the original's value is unknown and no stress given)"),
               SUB_NO_NEED, ("—", fmt(offered, unit) if isinstance(offered, float) else "—"),
               False)


def _rating(name: str, offered: float | None, original: float | None, stress: float | None,
            factor: float, what: str, policy: Policy) -> Row:
    """A rating that should be high: the stress (graded by the policy factor) or else the
    original's rating is the need."""
    label, unit = LABELS[name]
    need = stress if stress is not None else original
    if need is None:
        return _none(name, offered)
    shown = (fmt(need, unit), fmt(offered, unit))
    if offered is None:
        return Row(Check(name, need, None, None, "unknown", f"not in the record (need "
                         f"{fmt(need, unit)})"), SUB_UNKNOWN_RATING, shown, True)
    h = offered / need
    if stress is not None:
        status = grade(stress, offered, factor)
        note = (f"{what} {fmt(stress, unit)} is {100 * stress / offered:.0f} % of {label} "
                f"{fmt(offered, unit)}; {policy.name} allows {factor:.0%}")
        sub = _sub(status, h, plain=False, factor=factor)
    else:
        status = grade(original, offered)
        note = f"{label} {fmt(offered, unit)} against the original's {fmt(original, unit)}"
        sub = _sub(status, h)
    return Row(Check(name, need, offered, h, STATUSES[status], note), sub, shown, True)


def _lower(name: str, offered: float | None, original: float | None, ok_up_to: float,
           marginal_up_to: float | None, what: str = "") -> Row:
    """A value that should be low, against the original's (ratio need / offered)."""
    label, unit = LABELS[name]
    if original is None:
        return _none(name, offered)
    shown = (fmt(original, unit), fmt(offered, unit))
    if offered is None:
        return Row(Check(name, original, None, None, "unknown", f"not in the record (original "
                         f"{fmt(original, unit)})"), SUB_UNKNOWN_RATING, shown, True)
    times = offered / original
    status = ratio_status(times, ok_up_to, marginal_up_to)
    note = (f"{label} {fmt(offered, unit)} is {times:.2g} x the original's "
            f"{fmt(original, unit)}" + (f"; {what}" if what and status != OK else ""))
    return Row(Check(name, original, offered, original / offered, STATUSES[status], note),
               _sub(status, original / offered * ok_up_to), shown, True)


def _fit(name: str, need: str | None, offered: str | None, other: float, code: str) -> Row:
    if need is None:
        return Row(Check(name, None, None, None, "unknown", fit_note(name, None, offered,
                                                                     "unknown")),
                   SUB_NO_NEED, ("—", offered or "—"), False)
    same = (outline_key(need) == outline_key(offered)) if name == "package" else need == offered
    status = UNKNOWN if offered is None else OK if same else MARGINAL
    sub = SUB_UNKNOWN_FIT if offered is None else 1.0 if same else other
    return Row(Check(name, None, None, None, STATUSES[status],
                     fit_note(name, need, offered, STATUSES[status]),
                     code if status == MARGINAL else ""), sub, (need, offered or "—"), True)


Memo = dict
"""Rows already computed in one ranking, keyed by the check and the candidate fields it reads
(the original, the stress and the policy are the same for the whole ranking): a catalog repeats
its ratings, so each distinct value is checked once; the same functions, the same rows."""


def _once(memo: dict[Any, Any] | None, key: tuple[Any, ...], make: Any) -> Any:
    if memo is None:
        return make()
    hit = memo.get(key)
    if hit is None:
        hit = memo[key] = make()
    return hit


_THERMAL_FIELDS = ("ptot", "ptot_ref", "tj_max", "rth_jc", "package", "rds_on", "qg")


def mosfet_checks(orig: Any, cand: Any, stress: Stress, policy: Policy,
                  memo: dict[Any, Any] | None = None) -> Assessment:
    """Every MOSFET check of ``cand`` as a substitute for ``orig`` (``memo``: rows already
    computed in this ranking, see :data:`Memo`)."""
    out = Assessment()
    rows = out.rows
    v = {name: getattr(cand, name, None) for name in _MOSFET_FIELDS}
    rows.append(_once(memo, ("vds", v["vds"]), lambda: _rating(
        "vds", v["vds"], _v(orig, "vds"), stress.vds_peak, policy.voltage, "Vds peak", policy)))
    rows.append(_once(memo, ("id_max", v["id_max"]), lambda: _rating(
        "id_max", v["id_max"], _v(orig, "id_max"), stress.id_peak, policy.current, "Id peak",
        policy)))
    t_rows, t_flags = _once(memo, ("thermal", *(v[n] for n in _THERMAL_FIELDS)),
                            lambda: _thermal_rows(orig, cand, stress, policy, mosfet=True))
    rows += t_rows
    out.flags += t_flags
    drive, assumed = (stress.drive, False) if stress.drive is not None else \
        (_v(orig, "rds_on_vgs"), True)
    rows.append(_once(memo, ("drive", v["rds_on_vgs"], v["vgs_th_min"], v["vgs_th_max"]),
                      lambda: _drive_row(drive, assumed, cand)))
    rows.append(_once(memo, ("rds_on", v["rds_on"], v["rds_on_vgs"]),
                      lambda: _rds_row(orig, cand, stress)))
    rows.append(_once(memo, ("vgs_max", v["vgs_max"]),
                      lambda: _vgs_max_row(drive, assumed, cand, policy)))
    qg = _once(memo, ("qg", v["qg"]), lambda: _lower(
        "qg", v["qg"], _v(orig, "qg"), GATE_CHARGE_FACTOR, None,
        "more charge loads the gate driver and slows the edges (more switching loss)"))
    rows.append(qg)
    if qg.check.status == "marginal" and qg.check.ratio:
        out.flags.append(Flag("slow-gate", f"Qg {1 / qg.check.ratio:.2g} x the original's: the "
                                           "driver must move more charge; check its current "
                                           "and the switching loss (common practice)"))
    rows.append(_once(memo, ("body_diode", v["body_diode"]),
                      lambda: _body_diode_row(orig, cand)))
    trr_need = _v(orig, "trr") if _flag_value(_v(orig, "body_diode")) is not False else None
    rows.append(_once(memo, ("trr", v["trr"]), lambda: _lower(
        "trr", v["trr"], trr_need, 1.0, None,
        "slower recovery: more loss and ringing where the body diode commutates (bridges)")))
    rows += _fits(orig, v, memo)
    return out


_MOSFET_FIELDS = ("vds", "id_max", "vgs_max", "rds_on", "rds_on_vgs", "vgs_th_min",
                  "vgs_th_max", "qg", "body_diode", "trr", "package", "pinout",
                  *_THERMAL_FIELDS)
_JFET_FIELDS = ("vds", "idss_min", "idss_max", "vgs_off_min", "vgs_off_max", "yfs", "yfs_id",
                NOISE_FIELD, "ciss", "package", "pinout", *_THERMAL_FIELDS)


def _fits(orig: Any, v: dict[str, Any], memo: dict[Any, Any] | None) -> list[Row]:
    return [_once(memo, ("package", v["package"]), lambda: _fit(
                "package", _v(orig, "package"), v["package"], 0.3, "other-outline")),
            _once(memo, ("pinout", v["pinout"]), lambda: _fit(
                "pinout", _v(orig, "pinout"), v["pinout"], 0.5, "re-form-leads"))]


def jfet_checks(orig: Any, cand: Any, stress: Stress, policy: Policy,
                memo: dict[Any, Any] | None = None) -> Assessment:
    """Every JFET check of ``cand`` as a substitute for ``orig`` (``memo`` as for
    :func:`mosfet_checks`)."""
    out = Assessment()
    rows = out.rows
    v = {name: getattr(cand, name, None) for name in _JFET_FIELDS}
    rows.append(_once(memo, ("vds", v["vds"]), lambda: _rating(
        "vds", v["vds"], _v(orig, "vds"), stress.vds_peak, policy.voltage, "Vds peak", policy)))
    windows = tuple(v[n] for n in ("idss_min", "idss_max", "vgs_off_min", "vgs_off_max"))
    rows.append(_once(memo, ("idss", *windows), lambda: _window_row("idss", orig, cand)))
    rows.append(_once(memo, ("vgs_off", *windows[2:]),
                      lambda: _window_row("vgs_off", orig, cand)))
    rows.append(_once(memo, ("yfs", v["yfs"], v["yfs_id"]), lambda: _yfs_row(orig, cand, policy)))
    rows.append(_once(memo, ("noise", v[NOISE_FIELD]), lambda: _lower(
        "noise", v[NOISE_FIELD], _v(orig, NOISE_FIELD), 1.0, None,
        "noisier: audible in a low-level stage")))
    rows.append(_once(memo, ("ciss", v["ciss"]), lambda: _lower(
        "ciss", v["ciss"], _v(orig, "ciss"), CISS_FACTOR, None,
        "more input capacitance: less bandwidth from a high source impedance")))
    t_rows, t_flags = _once(memo, ("thermal", *(v[n] for n in _THERMAL_FIELDS)),
                            lambda: _thermal_rows(orig, cand, stress, policy, mosfet=False))
    rows += t_rows
    out.flags += t_flags
    rows += _fits(orig, v, memo)
    return out


def _yfs_row(orig: Any, cand: Any, policy: Policy) -> Row:
    yfs = _rating("yfs", _v(cand, "yfs"), _v(orig, "yfs"), None, 1.0, "", policy)
    if yfs.check.ratio is not None and yfs.check.ratio < 1:
        status = MARGINAL if yfs.check.ratio >= 0.5 * (1 - 1e-9) else UNDER
        yfs.check = Check("yfs", yfs.check.need, yfs.check.offered, yfs.check.ratio,
                          STATUSES[status], yfs.check.note + f": the stage gain falls to about "
                          f"{yfs.check.ratio:.0%} (gain ~ |yfs| x Rd)")
    if yfs.check.ratio is not None and _v(orig, "yfs_id") and _v(cand, "yfs_id"):
        yfs.check = Check("yfs", yfs.check.need, yfs.check.offered, yfs.check.ratio,
                          yfs.check.status, yfs.check.note + f" (measured at "
                          f"{fmt(_v(cand, 'yfs_id'), 'A')} against {fmt(_v(orig, 'yfs_id'), 'A')})")
    return yfs


def _thermal_rows(orig: Any, cand: Any, stress: Stress, policy: Policy,
                  mosfet: bool) -> tuple[list[Row], list[Flag]]:
    flags: list[Flag] = []
    o, c = Rating.of(orig), Rating.of(cand)
    load, missing = load_of(cand, stress, mosfet)
    t = thermal(o, c, stress, policy, load)
    if missing:
        flags.append(Flag("switching-loss-unknown", missing))
    if t.runaway:
        flags.append(Flag("thermal-runaway", t.ptot_note))
    if c.tj_assumed and c.ptot is not None:
        flags.append(Flag("tj-assumed", f"Tj max not in the record: {c.tj_max:g} °C assumed "
                                        "(silicon) to derate Ptot"))
    ptot_applicable = t.basis not in ("none",)
    rows = [Row(Check("ptot", t.ptot_need, t.ptot_offered, t.ptot_ratio,
                      STATUSES[t.ptot_status], t.ptot_note,
                      heatsink_needed=t.sink_needed),
                _sub(t.ptot_status, t.ptot_ratio, plain=t.basis != "stress",
                     factor=policy.power),
                (fmt(t.ptot_need, "W"), fmt(t.ptot_offered, "W")), ptot_applicable)]
    tj_need = t.tj_need
    if t.basis == "stress" and tj_need is not None:
        shown = (f"(est. Tj {tj_need:.0f} °C)", f"{t.tj_offered:.0f} °C")
        ratio = (t.tj_offered - stress.ambient) / (tj_need - stress.ambient) \
            if tj_need > stress.ambient else None
    else:
        shown = ("—" if tj_need is None else f"{tj_need:.0f} °C", f"{t.tj_offered:.0f} °C")
        ratio = None
    rows.append(Row(Check("tj_max", tj_need, t.tj_offered, ratio, STATUSES[t.tj_status],
                          t.tj_note), _sub(t.tj_status, ratio if ratio else None),
                    shown, t.basis != "none" or tj_need is not None))
    return rows, flags


def _threshold(dev: Any) -> float | None:
    """Vgs(th) max as a magnitude: the larger of the stated ends (the threshold is stored with
    its sign, so a P-channel part's "max" may be either end)."""
    ends = [abs(v) for v in (_v(dev, "vgs_th_min"), _v(dev, "vgs_th_max")) if v is not None]
    return max(ends) if _v(dev, "vgs_th_max") is not None and ends else None


def _drive_row(drive: float | None, assumed: bool, cand: Any) -> Row:
    vgs, th = _v(cand, "rds_on_vgs"), _threshold(cand)
    status = overdrive_status(drive, vgs, th)
    shown = (fmt(drive, "V"), fmt(vgs, "V"))
    if drive is None:
        return _none("drive", vgs)
    how = " (assumed: the original's Rds(on) test voltage; give --drive)" if assumed else ""
    if vgs is None:
        return Row(Check("drive", drive, None, None, "unknown", f"drive {fmt(drive, 'V')}{how}: "
                         "the candidate's Rds(on) test voltage is not in the record"),
                   SUB_UNKNOWN_RATING, shown, True)
    d, v = abs(drive), abs(vgs)
    twice = f"{OVERDRIVE_FACTOR:g} x Vgs(th) max {fmt(abs(th), 'V')} = " \
            f"{fmt(OVERDRIVE_FACTOR * abs(th), 'V')}" if th is not None else ""
    if status == OK:
        note = f"drive {fmt(d, 'V')}{how} >= Rds(on) test voltage {fmt(v, 'V')}: rated at this drive"
    elif status == MARGINAL:
        note = (f"drive {fmt(d, 'V')}{how} is below the Rds(on) test voltage {fmt(v, 'V')} but "
                f">= {twice}: on, with Rds(on) above the stated figure (standard gate on a "
                "lower drive; common practice)")
    else:
        note = (f"drive {fmt(d, 'V')}{how} is below the Rds(on) test voltage {fmt(v, 'V')}"
                + (f" and below {twice}" if twice else " and Vgs(th) max is not stated")
                + ": too little overdrive, the part may stay partly on and overheat (needs a "
                  "logic-level part; common practice)")
    sub = {OK: 1.0, MARGINAL: 0.5, UNDER: 0.1}[status]
    return Row(Check("drive", d, v, d / v, STATUSES[status], note), sub, shown, True)


def _rds_row(orig: Any, cand: Any, stress: Stress) -> Row:
    judged = stress.id_peak is not None or stress.power is not None
    row = _lower("rds_on", _v(cand, "rds_on"), _v(orig, "rds_on"), 1.0,
                 None if judged else 2.0,
                 "more conduction loss, I^2 x Rds(on)" + (" (the Ptot check judges it at "
                                                          "the stated current)" if judged
                                                          else ""))
    ov, cv = _v(orig, "rds_on_vgs"), _v(cand, "rds_on_vgs")
    if row.check.offered is not None and ov is not None and cv is not None and ov != cv:
        row.check = Check("rds_on", row.check.need, row.check.offered, row.check.ratio,
                          row.check.status, row.check.note + f" (specified at Vgs "
                          f"{fmt(abs(cv), 'V')} against {fmt(abs(ov), 'V')})")
    return row


def _vgs_max_row(drive: float | None, assumed: bool, cand: Any, policy: Policy) -> Row:
    row = _rating("vgs_max", _v(cand, "vgs_max"), None, None if drive is None else abs(drive),
                  policy.voltage, "gate drive" + (" (assumed)" if assumed else ""), policy)
    return row


def _body_diode_row(orig: Any, cand: Any) -> Row:
    need, offered = _flag_value(_v(orig, "body_diode")), _flag_value(_v(cand, "body_diode"))
    shown = ("yes" if need else "—", {True: "yes", False: "no", None: "—"}[offered])
    if not need:
        return Row(Check("body_diode", None, None, None, "unknown",
                         "no requirement (the original has no body diode on record)"),
                   SUB_NO_NEED, shown, False)
    if offered is None:
        return Row(Check("body_diode", None, None, None, "unknown",
                         "not in the record (the original has one)"), SUB_UNKNOWN_RATING,
                   shown, True)
    if offered:
        return Row(Check("body_diode", None, None, None, "ok", "has one, like the original"),
                   1.0, shown, True)
    return Row(Check("body_diode", None, None, None, "under-rated",
                     "no body diode: the original has one, and bridges and motor drives "
                     "conduct through it (fit an external diode or choose another part)"),
               0.0, shown, True)


def _window_row(name: str, orig: Any, cand: Any) -> Row:
    unit = LABELS[name][1]
    need = (_v(orig, f"{name}_min"), _v(orig, f"{name}_max"))
    offered = (_v(cand, f"{name}_min"), _v(cand, f"{name}_max"))
    status, sub = window_status(need, offered)
    shown = (_window_text(*need, unit), _window_text(*offered, unit))
    if status == UNKNOWN and need == (None, None):
        return Row(Check(name, None, None, None, "unknown", "no requirement (the original's "
                         "window is unknown)"), sub, shown, False)
    n_c, o_c = geometric_centre(*need), geometric_centre(*offered)
    if status == UNKNOWN:
        return Row(Check(name, n_c, None, None, "unknown", f"not in the record (need "
                         f"{shown[0]})"), sub, shown, True)
    assert n_c is not None and o_c is not None
    note = f"window {shown[1]} against {shown[0]} (log scale)"
    note += {OK: ": inside the original's", MARGINAL: ": reaches outside the original's",
             UNDER: ": far outside the original's (more than a factor 2)"}[status]
    if name == "idss":
        note += bias_shift_text(orig, cand)
    return Row(Check(name, n_c, o_c, o_c / n_c, STATUSES[status], note), sub, shown, True)


def _window_text(lo: float | None, hi: float | None, unit: str) -> str:
    if lo is None and hi is None:
        return "—"
    if lo is None or hi is None or lo == hi:
        return fmt(lo if lo is not None else hi, unit)
    return f"{fmt(lo, unit)}..{fmt(hi, unit)}"


def bias_shift_text(orig: Any, cand: Any) -> str:
    """How far a self-biased stage's current moves with the candidate (Shockley's law with the
    original's implied source resistor, window centres), as a clause of the Idss note."""
    idss_o = geometric_centre(_v(orig, "idss_min"), _v(orig, "idss_max"))
    vp_o = geometric_centre(_v(orig, "vgs_off_min"), _v(orig, "vgs_off_max"))
    idss_c = geometric_centre(_v(cand, "idss_min"), _v(cand, "idss_max"))
    vp_c = geometric_centre(_v(cand, "vgs_off_min"), _v(cand, "vgs_off_max"))
    if None in (idss_o, vp_o, idss_c, vp_c):
        return "; stage shift not computed (Vgs(off) not in both records)"
    assert idss_o and vp_o and idss_c and vp_c
    rs = implied_source_resistor(idss_o, vp_o)
    i_o = self_bias_current(idss_o, vp_o, rs)
    i_c = self_bias_current(idss_c, vp_c, rs)
    return (f"; a self-biased stage (Rs = 2|Vp|/Idss = {fmt(rs, 'Ω')} from the original's "
            f"window centres, designed at Id = Idss/4) runs at {fmt(i_c, 'A')} instead of "
            f"{fmt(i_o, 'A')} ({i_c / i_o - 1:+.0%}; Shockley Id = Idss(1 - Vgs/Vp)^2)")
