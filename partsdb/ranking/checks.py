"""The checks and scores of a ranking, row by row in array form: the reference path.

:func:`evaluate` computes every check of every row of a catalog; :mod:`partsdb.ranking.fastpath`
computes the same per distinct value tuple and must agree with it bit for bit (tested).
Statuses are :func:`partsdb.derating.grade` codes.

Checks, one per parameter and candidate (status ``ok`` / ``marginal`` / ``under-rated`` /
``unknown``):

* **Ratings** (vceo, vcbo, vebo, ic_max, ptot). Without a circuit stress the need is the
  original's rating and a lower rating is ``under-rated``. With a stress (``--vce-peak`` for
  vceo and vcbo, ``--ic-peak`` for ic_max, ``--power`` for ptot) the stress is the need, graded
  by the rule of :func:`partsdb.derating.grade` (boundaries with a relative tolerance): at most
  factor x rating ``ok``, up to the rating ``marginal``, above it ``under-rated``; being below
  the original's rating is then only a flag. Vebo (the reverse base-emitter voltage) is needed
  at the original's value (or ``--veb-peak`` as a stress): a silicon part for a germanium one
  often fails it.
* **ptot**, by :func:`sink_mode`. Free-air ratings derate linearly to Tj max. Case ratings go
  through Rth j-c + c-s + s-a (:mod:`partsdb.thermal`, mounting c-s per outline class):
  ``given`` one sink; ``free-air`` the bare outline; ``sweep`` (a case-rated original, no sink
  given) the substitute on the original's sink, compared over :data:`partsdb.thermal.SINK_SWEEP`
  and graded on the worst ratio; ``needed`` (``--power`` and no sink given) the largest sink
  that keeps Tj within the policy is reported (:func:`partsdb.thermal.heatsink_needed`), and a
  case-rated part is ``under-rated`` only when even an ideal sink is not enough.
* **tj_max**. With a power stress the junction temperature is estimated, Tj = Ta + P x Rth, and
  graded against the policy's Tj limit (ok), Tj max (marginal), above (under-rated); a
  case-rated part with no sink given has no estimate and takes the ptot check's result. Without
  one, a lower Tj max than the original's is under-rated. An ambient at or above Tj max is
  ``under-rated`` in every case.
* **ft**. The need is the original's f_T or, with ``--freq f``, hFE min x f capped at the
  original's f_T: above f_beta the gain falls as f_T / f, so a stage needing gain G at f needs
  f_T >= G x f (gain-bandwidth, textbook: |hfe| = hfe0 / (1 + j f / f_beta), f_T = hfe0 x
  f_beta), but the original met its own stage. Beyond 10x the original's f_T (or the need) the
  sub-score falls, to half marks at 100x (common practice: a much faster part may oscillate).
* **hfe**. Windows compared on a log scale: wholly below the need, or a minimum below half the
  needed minimum, is ``under-rated``; reaching below the needed minimum, or wholly above the
  need, ``marginal`` (common practice); test currents more than a decade apart make it at best
  ``marginal``. A minimum above three times the needed maximum is flagged as an instability
  risk (common practice).
* **package**, **pinout**, **material**: same is ``ok``; a different outline, lead order or
  material needs work at the bench and is ``marginal`` (with what to do in the note).
* A value missing on either side is ``unknown`` and lowers the candidate's confidence (the share
  of the checks with a need whose values are known); an unknown Vceo, Ic max or Ptot against a
  known need makes the verdict ``unverified`` (the part cannot be confirmed), and a confidence
  under the policy's ``min_confidence`` keeps the candidate from ``suitable``, so missing data
  is never silently ok.

Sub-scores (0..1, monotone non-decreasing in the candidate's headroom on every rating):

* rating with a stress, headroom h = rating / stress, policy factor f:
  h < 1: 0.3 h; 1 <= h < 1/f: 0.3 + 0.4 (h - 1) / (1/f - 1); h >= 1/f: 0.7 + 0.3 min(1, h f - 1)
  (full marks at twice the policy's limit);
* rating without a stress, h = offered / original: h < 1: 0.3 h; else 0.7 + 0.3 min(1, h - 1);
* tj_max: the same on the temperature rise above the ambient (no stress: above 25 °C);
* hfe: 1 - (log gap between the windows + log shortfall of the minimum) / ln 10, clipped to 0..1;
* package / pinout / material: 1 same, 0.3 other outline, 0.5 other lead order, 0.2 ge <-> si,
  0.4 other material change;
* unknown offered value: 0.25 (rating) or 0.4 (fit); no need at all: 0.5 for every candidate;
* stock: 1 in the drawers, 0 not; history: 1 worked before, 0 failed before, 0.5 no record.

Score = 100 x sum(w_i s_i) / sum(w_i). Default weights (override in the config file's
``[weights]`` table, see :mod:`partsdb.services.config`):

    vceo 20, vcbo 5, vebo 3, ic_max 15, ptot 15, tj_max 5, ft 10, hfe 10,
    package 8, pinout 4, material 8, stock 10, history 10

Score = 100 x sum(w_i s_i) / sum(w_i); verdict: the worst check.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from partsdb.derating import (
    MARGINAL,
    OK,
    REL_TOL,
    SUITABLE,
    UNDER,
    UNKNOWN,
    UNVERIFIED,
    V_MARGINAL,
    V_UNDER,
    Policy,
    grade,
)
from partsdb.device import default_tj_max
from partsdb.ranking.columns import CatalogColumns
from partsdb.ranking.model import (
    FT_FAST_FACTOR,
    HFE_CURRENT_DECADES,
    HFE_LOW_FACTOR,
    MATERIALS,
    PARAMETERS,
    PRIMARY,
    SUB_NO_NEED,
    SUB_UNKNOWN_FIT,
    SUB_UNKNOWN_RATING,
    Requirement,
    Stress,
    Weights,
    outline_key,
)
from partsdb.thermal import (
    SINK_SWEEP,
    allowed_power,
    case_to_ambient,
    chain_power,
    derated_power,
    free_air_case_to_ambient,
    heatsink_needed,
    mounting_resistance,
    thermal_path,
)


@functools.lru_cache(maxsize=64)
def _segments(xs: tuple[float, ...], ys: tuple[float, ...]
              ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Break points, and per segment index (as ``searchsorted(xs, h, "right")`` numbers them)
    its slope, start and start value; the last index is the flat part from the last point."""
    xs_a = np.array(xs, dtype=float)
    slope = [0.0] + [(ys[j + 1] - ys[j]) / (xs[j + 1] - xs[j]) for j in range(len(xs) - 1)]
    return xs_a, np.array([*slope, 0.0]), np.array([xs[0], *xs]), np.array([ys[0], *ys])


def _piecewise(h: np.ndarray, xs: Sequence[float], ys: Sequence[float]) -> np.ndarray:
    """The broken line through (xs, ys), flat outside, as closed-form array arithmetic.

    Bit for bit what ``np.interp(h, xs, ys)`` returns (numpy's own formula per segment:
    slope x (h - x_j) + y_j with slope = (y_j+1 - y_j) / (x_j+1 - x_j); y_j at a break point;
    NaN stays NaN): h is clipped to the line's ends, each element's segment found by one
    binary search over the break points, and the formula taken with that segment's values.
    A test checks both agree.
    """
    xs_a, slope, x0, y0 = _segments(tuple(xs), tuple(ys))
    h = np.clip(np.asarray(h, dtype=float), xs_a[0], xs_a[-1])  # NaN stays NaN
    seg = np.searchsorted(xs_a, h, side="right")  # NaN sorts last: the flat end, then NaN
    out = slope.take(seg)
    out *= h - x0.take(seg)
    out += y0.take(seg)
    return out


def headroom_score_stressed(h: np.ndarray, factor: Any) -> np.ndarray:
    """Sub-score of headroom h = rating / stress under a policy factor (see module docstring).

    Continuous and piecewise linear in h: 0 at 0, 0.3 at the rating, 0.7 at the policy's limit
    (h = 1/f), 1.0 at twice the limit.
    """
    if np.ndim(factor) == 0:
        inv_f = 1.0 / float(factor)
        if inv_f > 1.0:
            return _piecewise(h, (0.0, 1.0, inv_f, 2.0 * inv_f), (0.0, 0.3, 0.7, 1.0))
        return headroom_score_plain(h)
    inv = 1.0 / np.asarray(factor, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        mid = 0.3 + 0.4 * np.where(inv > 1, (h - 1.0) / (inv - 1.0), 1.0)
    # (clips as two ufuncs: the same values, NaN kept, cheaper per call than np.clip)
    top = 0.7 + 0.3 * np.minimum(np.maximum(h / inv - 1.0, 0.0), 1.0)
    return np.where(h < 1.0, 0.3 * np.minimum(np.maximum(h, 0.0), 1.0),
                    np.where(h < inv, mid, top))


def headroom_score_plain(h: np.ndarray) -> np.ndarray:
    """Sub-score of headroom h = offered / original's rating (no stress).

    0.3 h below the rating, then a step to 0.7 at the rating and 0.3 more up to twice it.
    """
    out = _piecewise(h, (0.0, 1.0, 2.0), (0.0, 0.3, 0.6))
    out[h >= 1.0] += 0.4
    return out


@dataclass
class Column:
    """One check over the evaluated rows (arrays aligned with the row selection)."""

    need: Any
    """Scalar or array (NaN: no need)."""
    offered: np.ndarray
    status: np.ndarray
    sub: np.ndarray
    ratio: np.ndarray | None = None
    basis: str = ""
    """How the need was set (for notes): rating, stress, freq, ..."""
    extra: np.ndarray | None = None
    """ptot: the sink-to-ambient K/W each row needs (``sink_mode`` needed; NaN: none)."""


def _rating_column(offered: np.ndarray, original: float | None, stress: float | None,
                   factor: float) -> Column:
    n = offered.shape[0]
    with np.errstate(invalid="ignore", divide="ignore"):
        if stress is not None:
            h = offered / stress
            status = grade(stress, offered, factor)
            sub = headroom_score_stressed(h, factor)
            basis = "stress"
            need: float = stress
        elif original is not None:
            h = offered / original
            status = grade(original, offered)  # under-rated below the original, ok from it up
            sub = headroom_score_plain(h)
            basis = "original"
            need = original
        else:
            return Column(np.nan, offered, np.full(n, UNKNOWN, np.int8), np.full(n, SUB_NO_NEED),
                           None, "none")
    unknown = np.isnan(offered)
    status[unknown] = UNKNOWN
    sub = np.where(unknown, SUB_UNKNOWN_RATING, sub)
    return Column(need, offered, status, sub, h, basis)


def ft_need_of(req: Requirement, stress: Stress) -> tuple[float | None, str]:
    """(fT need, how it was set): with ``--freq f`` hFE min x f (gain-bandwidth), capped at the
    original's fT when one is stored (the original met its own stage); else the original's."""
    if stress.freq is not None and req.hfe_min is not None:
        gbw = req.hfe_min * stress.freq
        if req.ft is not None and req.ft < gbw:
            return req.ft, "gain-bandwidth-capped"
        return gbw, "gain-bandwidth"
    return req.ft, "original"


@dataclass
class Evaluation:
    rows: np.ndarray
    columns: dict[str, Column]
    stock: np.ndarray
    history: np.ndarray
    score: np.ndarray
    verdict: np.ndarray
    allowed_power: np.ndarray
    tj_estimate: np.ndarray | None


def _requirement_power(req: Requirement, stress: Stress, sink: float | None = None
                       ) -> tuple[float | None, float | None]:
    """The original's allowed power at the ambient in its mounting (``sink``: this
    sink-to-ambient K/W in place of the stress's), and its Tj max used."""
    if req.ptot is None:
        return None, None
    tj = req.tj_max if req.tj_max is not None else default_tj_max(req.material)
    ref = req.ptot_ref or "ambient"
    free_air, _ = free_air_case_to_ambient(req.package)
    rth = thermal_path(req.ptot, tj, ref, stress.heatsink if sink is None else sink,
                       mounting_resistance(req.package), free_air)
    return float(allowed_power(req.ptot, tj, ref, stress.ambient, rth)), tj


def sink_mode(req: Requirement, stress: Stress) -> str:
    """How case ratings are mounted: ``given`` (``--heatsink K/W``), ``free-air`` (``--heatsink
    free-air``, or a free-air-rated original with no sink given), ``sweep`` (a case-rated
    original, no sink given, no dissipation: the substitute goes on the original's sink, compared
    over :data:`partsdb.thermal.SINK_SWEEP`) or ``needed`` (no sink given and ``--power``: the
    sink a case-rated part needs is reported)."""
    if stress.heatsink is not None:
        return "free-air" if stress.free_air else "given"
    if stress.power is not None:
        return "needed"
    return "sweep" if req.ptot_ref == "case" and req.ptot is not None else "free-air"


_VERDICT_OF = np.array([SUITABLE, V_MARGINAL, V_UNDER, SUITABLE], dtype=np.int8)
"""Verdict contribution of a status code: ok suitable, marginal, under-rated, unknown suitable
(an unknown primary rating makes it unverified, see :func:`verdict_part`)."""


def _thermal_columns(cat: CatalogColumns, req: Requirement, stress: Stress, policy: Policy,
                     cols: dict[str, Column]) -> tuple[np.ndarray, np.ndarray | None]:
    """The ptot and tj_max checks (see the module docstring): (allowed power, Tj estimate)."""
    n = cat.size
    mode = sink_mode(req, stress)
    ta = stress.ambient
    # Power allowed at the ambient in this mounting: free-air ratings derate linearly, case
    # ratings go through Rth j-c + c-s + s-a (thermal.py); the two groups are computed apart
    # so the reference is a scalar, not a string array. (thermal_path and allowed_power, taken
    # apart so the parts that read only the ratings are computed once per catalog:
    # CatalogColumns.rating_thermal)
    rth, case, ptot_c, tj_c, rth_c, free_air_c, rcs_c = cat.rating_thermal
    allowed = np.asarray(derated_power(cat.ptot, cat.tj_effective, ta), dtype=float)
    needed = np.full(n, np.nan)
    tj_est: np.ndarray | None = None
    if mode == "sweep":
        # The substitute goes on the original's heat sink, whatever it is: the worst ratio of
        # allowed powers over the sweep decides (case-rated rows through their own mounting,
        # free-air-rated rows at their free-air rating: a sink is not credited to them).
        worst = np.full(n, np.inf)
        need = np.full(n, np.nan)
        offered = allowed.copy()
        for sink in SINK_SWEEP:
            orig = _requirement_power(req, stress, sink)[0]
            cand = allowed.copy()
            if case.shape[0]:
                cand[case] = chain_power(ptot_c, tj_c, ta, rth_c + rcs_c + sink)
            with np.errstate(invalid="ignore", divide="ignore"):
                ratio = cand / orig if orig else np.full(n, np.nan)
            better = ratio < worst
            worst = np.where(better, ratio, worst)
            need = np.where(better, orig if orig is not None else np.nan, need)
            offered = np.where(better, cand, offered)
        worst[np.isinf(worst)] = np.nan
        unknown = np.isnan(worst)
        status = grade(need, offered)
        status[unknown] = UNKNOWN
        sub = np.where(unknown, SUB_UNKNOWN_RATING, headroom_score_plain(worst))
        cols["ptot"] = Column(need, offered, status, sub, worst, "sweep")
        allowed = offered
    elif mode == "needed":
        # No invented free-air junction temperature: a case-rated row is offered the power an
        # ideal sink allows at the policy's Tj limit, and the sink it needs is reported.
        if case.shape[0]:
            limit_c = np.asarray(policy.tj_limit(tj_c), dtype=float)
            with np.errstate(invalid="ignore", divide="ignore"):
                allowed[case] = np.maximum((limit_c - ta) / (rth_c + rcs_c), 0.0)
            need_c = heatsink_needed(limit_c, ta, stress.power, rth_c, rcs_c)
            # none needed when the bare outline in free air already suffices
            needed[case] = np.where(need_c + rcs_c >= free_air_c, np.nan, need_c)
            needed[case] = np.where(need_c <= 0, need_c, needed[case])
        col = _rating_column(allowed, None, stress.power, policy.power)
        if case.shape[0]:
            # with a sink to be chosen, under-rated only when even an ideal sink is not enough
            col.status[case] = grade(stress.power, allowed[case])
            h_c = allowed[case] / stress.power
            col.sub[case] = np.where(np.isnan(h_c), SUB_UNKNOWN_RATING, headroom_score_plain(h_c))
        col.basis = "needed"
        cols["ptot"] = col
    else:
        if case.shape[0]:
            given_sink = stress.heatsink if mode == "given" else None
            rc = rth_c + case_to_ambient(given_sink, rcs_c, free_air_c)
            rth = rth.copy()
            rth[case] = rc
            allowed[case] = chain_power(ptot_c, tj_c, ta, rc)
        req_power, _ = _requirement_power(req, stress)
        cols["ptot"] = _rating_column(allowed, req_power, stress.power, policy.power)
    cols["ptot"].extra = needed

    tj = cat.tj_max
    if stress.power is not None:
        tj_est = ta + stress.power * rth
        if mode == "needed" and case.shape[0]:
            tj_est = tj_est.copy()
            tj_est[case] = np.nan  # the sink is unknown: no estimate
        limit = np.asarray(policy.tj_limit(tj), dtype=float)
        status = grade(tj_est, tj, limit=limit)
        with np.errstate(invalid="ignore", divide="ignore"):
            h = (tj - ta) / (tj_est - ta)
            factor = np.minimum(np.maximum((limit - ta) / (tj - ta), 1e-6), 1.0)
            sub = headroom_score_stressed(h, factor)
        unknown = status == UNKNOWN
        sub = np.where(unknown, SUB_UNKNOWN_RATING, sub)
        if mode == "needed" and case.shape[0]:
            # judged with the sink it needs: the Ptot check's status and sub-score
            status[case] = np.where(np.isnan(tj[case]), UNKNOWN, cols["ptot"].status[case])
            sub[case] = np.where(np.isnan(tj[case]), SUB_UNKNOWN_RATING, cols["ptot"].sub[case])
        col = Column(tj_est, tj, status, sub, h, "stress")
    elif req.tj_max is not None:
        col = _rating_column(tj - 25.0, req.tj_max - 25.0, None, 1.0)
        col.need, col.offered = req.tj_max, tj
    else:
        col = Column(np.nan, tj, np.full(n, UNKNOWN, np.int8), np.full(n, SUB_NO_NEED), None,
                     "none")
    # An ambient at or above the part's Tj max leaves it no power at all.
    hot = tj <= ta
    if hot.any():
        col.status = np.where(hot, UNDER, col.status).astype(np.int8)
        col.sub = np.where(hot, 0.0, col.sub)
    cols["tj_max"] = col
    return allowed, tj_est


def check_columns(cat: CatalogColumns, req: Requirement, stress: Stress, policy: Policy,
             names: Sequence[str] = PARAMETERS
             ) -> tuple[dict[str, Column], np.ndarray | None, np.ndarray | None]:
    """The checks ``names`` over every row of ``cat``: (columns, allowed power, Tj estimate).

    Each check depends only on its own row, so the same function serves the rows returned
    (details) and the distinct value tuples of a large group (:func:`group_scores`).
    """
    cols: dict[str, Column] = {}
    if "vceo" in names:
        cols["vceo"] = _rating_column(cat.vceo, req.vceo, stress.vce_peak, policy.voltage)
    if "vcbo" in names:
        # Vcb is Vce minus Vbe: the Vce peak bounds it, so it is the stress on Vcbo too.
        cols["vcbo"] = _rating_column(cat.vcbo, req.vcbo, stress.vce_peak, policy.voltage)
    if "vebo" in names:
        # The reverse base-emitter voltage: --veb-peak, or else the original's Vebo, is the need.
        cols["vebo"] = _rating_column(cat.vebo, req.vebo, stress.veb_peak, policy.voltage)
    if "ic_max" in names:
        cols["ic_max"] = _rating_column(cat.ic_max, req.ic_max, stress.ic_peak, policy.current)

    allowed: np.ndarray | None = None
    tj_est: np.ndarray | None = None
    if "ptot" in names or "tj_max" in names:
        allowed, tj_est = _thermal_columns(cat, req, stress, policy, cols)

    if "ft" in names:
        ft_need, basis = ft_need_of(req, stress)
        col = _rating_column(cat.ft, ft_need, None, 1.0)
        if col.basis != "none":
            col.basis = basis
            # Much faster than the original (or the need) is no better: the sub-score falls
            # beyond FT_FAST_FACTOR times, to half marks at ten times that (common practice).
            ref = req.ft if req.ft is not None else ft_need
            assert ref is not None  # the need is known here (basis not "none")
            with np.errstate(invalid="ignore", divide="ignore"):
                over = np.log10(cat.ft / (FT_FAST_FACTOR * ref))
            fall = np.where(over > 0, 1.0 - 0.5 * np.minimum(over, 1.0), 1.0)
            col.sub = np.where(np.isnan(cat.ft), col.sub, col.sub * fall)
        cols["ft"] = col

    if "hfe" in names:
        cols["hfe"] = _hfe_column(cat, req)
    if "package" in names:
        cols["package"] = _fit_column(cat.package, _package_code(cat, req.package), 0.3)
    if "pinout" in names:
        cols["pinout"] = _fit_column(cat.pinout, _pinout_code(cat, req.pinout), 0.5)
    if "material" in names:
        mat_need = MATERIALS.index(req.material) if req.material in MATERIALS else -1
        mat = cat.material
        mcol = _fit_column(mat, mat_need, 0.4)
        if mat_need in (0, 1):
            # Germanium <-> silicon changes Vbe by about 0.4 V: the stage's bias must be
            # re-checked.
            mcol.sub = np.where(mat == 1 - mat_need, 0.2, mcol.sub)
        cols["material"] = mcol
    return cols, allowed, tj_est


def verdict_part(cols: Mapping[str, Column], n: int) -> np.ndarray:
    """Worst status of the given checks as a verdict code; an unknown primary rating against a
    known need makes it ``unverified`` (the part cannot be confirmed)."""
    verdict = np.zeros(n, np.int8)
    for name, col in cols.items():
        np.maximum(verdict, _VERDICT_OF[col.status], out=verdict)
        if name in PRIMARY and col.basis != "none":
            np.maximum(verdict, (col.status == UNKNOWN).view(np.int8) * UNVERIFIED,
                       out=verdict)
    return verdict


def unknown_part(cols: Mapping[str, Column], n: int) -> tuple[np.ndarray, int]:
    """(per row, how many of the given checks with a need are unknown; how many have a need)."""
    count = np.zeros(n, np.int8)
    applicable = 0
    for col in cols.values():
        if col.basis != "none":
            applicable += 1
            count += col.status == UNKNOWN
    return count, applicable


def most_unknown(applicable: int, policy: Policy) -> int:
    """The most unknown checks a ``suitable`` candidate may have: its confidence, the share of
    the ``applicable`` checks known, must stay at or above the policy's minimum."""
    if applicable == 0:
        return 0
    return max((u for u in range(applicable + 1)
                if (applicable - u) / applicable >= policy.min_confidence - REL_TOL), default=-1)


def confidence_verdict(verdict: np.ndarray, unknown: np.ndarray, limit: int) -> np.ndarray:
    """``verdict`` kept from suitable (made marginal) where more than ``limit`` checks are
    unknown."""
    return np.maximum(verdict, (unknown > limit).view(np.int8) * V_MARGINAL, out=verdict)


def extras(weights: Weights, stock: np.ndarray, hist: np.ndarray) -> np.ndarray:
    """The stock and history part of the weighted sum (added after the checks, in this order)."""
    w = weights.as_dict()
    return w["stock"] * stock + w["history"] * hist


def evaluate(cat: CatalogColumns, rows: np.ndarray, req: Requirement, stress: Stress,
              policy: Policy, weights: Weights, stock_qty: np.ndarray | None,
              history_score: np.ndarray | None) -> Evaluation:
    """Every check and score over ``cat`` (whose rows are the global ``rows``).

    The straightforward evaluation, row by row in array form; the rows returned are always
    detailed from it, and :func:`group_scores` must agree with it exactly (tested).
    """
    n = rows.shape[0]
    cols, allowed, tj_est = check_columns(cat, req, stress, policy)
    stock = np.zeros(n) if stock_qty is None else (stock_qty[rows] > 0).astype(float)
    hist = np.full(n, 0.5) if history_score is None else history_score[rows]

    w = weights.as_dict()
    total = np.zeros(n)
    for name in PARAMETERS:
        if w[name]:
            total += w[name] * cols[name].sub
    total += extras(weights, stock, hist)
    score = 100.0 * total / weights.total()
    verdict = verdict_part(cols, n)
    unknown, applicable = unknown_part(cols, n)
    verdict = confidence_verdict(verdict, unknown, most_unknown(applicable, policy))
    assert allowed is not None
    return Evaluation(rows, cols, stock_qty[rows] if stock_qty is not None else np.zeros(n, int),
                       hist, score, verdict, allowed, tj_est)


def _package_code(cat: CatalogColumns, package: str | None) -> int:
    k = outline_key(package)
    if k is None:
        return -1
    for i, p in enumerate(cat.packages):
        if outline_key(p) == k:
            return i
    return -2  # known, but no row has it


def _pinout_code(cat: CatalogColumns, pinout: str | None) -> int:
    if not pinout:
        return -1
    return cat.pinouts.index(pinout) if pinout in cat.pinouts else -2


def _fit_column(codes: np.ndarray, need: int, other: float) -> Column:
    n = codes.shape[0]
    if need == -1:
        return Column(np.nan, codes, np.full(n, UNKNOWN, np.int8), np.full(n, SUB_NO_NEED),
                       None, "none")
    same = codes == need
    unknown = codes < 0
    status = (~same).view(np.int8).copy()  # OK 0 / MARGINAL 1
    status[unknown] = UNKNOWN
    sub = np.where(same, 1.0, other)
    sub[unknown] = SUB_UNKNOWN_FIT
    return Column(float(need), codes, status, sub, None, "original")


def _hfe_column(cat: CatalogColumns, req: Requirement) -> Column:
    n = cat.size
    lo, hi = cat.log_hfe
    if req.hfe_min is None:
        return Column(np.nan, cat.hfe_min, np.full(n, UNKNOWN, np.int8),
                       np.full(n, SUB_NO_NEED), None, "none")
    need_lo = math.log(req.hfe_min)
    need_hi = math.log(req.hfe_max if req.hfe_max is not None else req.hfe_min)
    gap = np.maximum(0.0, np.maximum(need_lo - hi, lo - need_hi))
    short = np.maximum(0.0, need_lo - lo)
    tol = REL_TOL
    # wholly below the need, or a minimum below half the needed minimum: under-rated; a window
    # reaching below the need (partial overlap) or wholly above it: marginal (common practice)
    under = (hi < need_lo - tol) | (short > math.log(HFE_LOW_FACTOR) + tol)
    marginal = (short > tol) | (lo > need_hi + tol)
    status = np.where(under, UNDER, np.where(marginal, MARGINAL, OK)).astype(np.int8)
    if req.hfe_ic is not None:
        # test currents more than a decade apart: the gains are not comparable
        with np.errstate(invalid="ignore", divide="ignore"):
            apart = np.abs(np.log10(cat.hfe_ic / req.hfe_ic)) > HFE_CURRENT_DECADES + tol
        status = np.where(apart & (status == OK), MARGINAL, status).astype(np.int8)
    sub = np.minimum(np.maximum(1.0 - (gap + short) / math.log(10.0), 0.0), 1.0)
    unknown = np.isnan(lo)
    status[unknown] = UNKNOWN
    sub = np.where(unknown, SUB_UNKNOWN_RATING, sub)
    with np.errstate(invalid="ignore"):
        ratio = np.exp(lo - need_lo)
    return Column(req.hfe_min, cat.hfe_min, status, sub, ratio, "original")

