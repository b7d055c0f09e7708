"""The substitution engine: rank the catalog's transistors as substitutes for a requirement.

Pure domain (numpy only). The catalog is held column-wise (:class:`CatalogColumns`); the hard
constraints (polarity, kind) are boolean masks, every check and score is an array operation over
the compatible rows, and the readable details (:class:`Check`, :class:`Flag`) are built only for
the rows returned. :func:`rank` and :func:`assess` are the
entry points; they take data already loaded.

The package holds one job per module: inputs (:mod:`~partsdb.ranking.model`), the column
catalog (:mod:`~partsdb.ranking.columns`), the checks and scores
(:mod:`~partsdb.ranking.checks`, the reference path), the grouped evaluation of large groups
(:mod:`~partsdb.ranking.fastpath`), the prose (:mod:`~partsdb.ranking.notes`) and the result
types (:mod:`~partsdb.ranking.result`); this module ranks and details.

Verdict: the worst check (``suitable`` / ``marginal`` / ``under-rated``; ``incompatible`` only
for rejected rows). Order: verdict class, then score (higher first), then the normalised
designation (the catalog's row order), so ties are broken deterministically.

Known limit of the model: Rth is derived from the rating, Rth = (Tj max - 25) / Ptot, so at the
same Ptot a higher Tj max implies a higher Rth; with a power stress a higher Tj max alone can
raise the estimated Tj (a fact of the rating model, not a scoring choice).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from partsdb.derating import (
    BUILTIN_POLICIES,
    DEFAULT_POLICY,
    INCOMPATIBLE,
    STATUSES,
    VERDICTS,
    Policy,
)
from partsdb.device import Device
from partsdb.ranking.checks import Evaluation, evaluate, sink_mode
from partsdb.ranking.columns import CatalogColumns, _name, _num
from partsdb.ranking.fastpath import group_scores
from partsdb.ranking.model import (
    DEFAULT_WEIGHTS,
    FIT_CODES,
    FT_FAST_FACTOR,
    KINDS,
    PARAMETERS,
    POLARITIES,
    UNIT,
    PastSwaps,
    Requirement,
    SpecError,
    Stress,
    Weights,
)
from partsdb.ranking.notes import (
    below_original,
    case_rating_message,
    fit_note,
    fmt,
    gain_code,
    much_faster,
    rating_note,
)
from partsdb.ranking.result import Candidate, Check, Flag, RankResult


def history_scores(cat: CatalogColumns, history: Mapping[str, PastSwaps] | None
                   ) -> np.ndarray | None:
    """History sub-score per row: 1 worked before, 0 failed before, 0.5 otherwise or mixed."""
    if not history:
        return None
    out = np.full(cat.size, 0.5)
    for key, past in history.items():
        i = cat.index_of(key)
        if i is None:
            continue
        if past.worked and not past.failed:
            out[i] = 1.0
        elif past.failed and not past.worked:
            out[i] = 0.0
    return out


_KEY_SORT_MAX = 2048
"""Pools up to this size are ordered by comparing their keys; larger ones use key_rank."""


def _top(score: np.ndarray, verdict: np.ndarray, cat: CatalogColumns, limit: int,
         exclude: int | None = None, keep: np.ndarray | None = None,
         at: np.ndarray | None = None) -> np.ndarray:
    """Positions of the best ``limit`` rows: verdict class, then score, then normalised key.

    ``exclude`` is a position left out (the original itself); ``keep``, when given, marks the
    rows that may be returned; ``at``, when given, is the row of ``cat`` at each position
    (``score`` covering only those rows). Only the rows tied at the cut are compared by key, so the
    tie-break costs nothing on a catalog of distinct scores.
    """
    n = score.shape[0]
    if n == 0 or limit <= 0:
        return np.zeros(0, dtype=np.intp)
    comp = verdict * 1000.0 - score
    if exclude is not None:
        comp[exclude] = np.inf
    if keep is not None:
        comp[~keep] = np.inf
    pool: np.ndarray | None = None
    if n > 64 * limit:
        # A cut read off a strided sample: every row at or below it is in the pool, so when
        # the pool holds at least ``limit`` rows the best ``limit`` (and every tie at the last
        # one) are in it, whatever the sample; otherwise the full selection below decides.
        step = max(1, n // 2048)
        sample = comp[::step]
        j = min(sample.shape[0] - 1, 4 * limit // step + 1)
        cut = np.partition(sample, j)[j]
        if np.isfinite(cut):
            candidates = np.flatnonzero(comp <= cut)
            if limit <= candidates.shape[0] <= 64 * limit:
                pool = candidates
    if pool is None and n > limit:
        part = np.argpartition(comp, limit - 1)[:limit]
        cut = comp[part].max()
        pool = np.flatnonzero(comp <= cut)  # every tie at the cut, so the tie-break is exact
    elif pool is None:
        pool = np.arange(n)
    pool = pool[np.isfinite(comp[pool])]
    # The pool holds every row that can be among the best (rounding in ``comp`` is monotone);
    # within it the order is exact: verdict, then score, then key. (``comp`` alone would merge
    # scores a few units in the last place apart: 2000 - 39.5 == 2000 - 39.50000000000001.)
    verdicts, scores = verdict[pool], score[pool]
    if pool.shape[0] <= _KEY_SORT_MAX:
        # Keys are unique and compare as key_rank orders them (code point order), so a small
        # pool needs no rank of the whole group (an argsort of every key, read cold).
        keys = cat.key[pool if at is None else at[pool]].tolist()
        vs, ss = verdicts.tolist(), scores.tolist()
        order = sorted(range(pool.shape[0]), key=lambda j: (vs[j], -ss[j], keys[j]))[:limit]
        return pool[np.array(order, dtype=np.intp)]
    ranks = cat.key_rank[pool if at is None else at[pool]]
    return pool[np.lexsort((ranks, -scores, verdicts))[:limit]]


def rank(catalog: CatalogColumns, requirement: Requirement, stress: Stress | None = None,
         policy: Policy | None = None, weights: Weights | None = None,
         stock_qty: np.ndarray | None = None, *, history: Mapping[str, PastSwaps] | None = None,
         locations: Mapping[str, Sequence[str]] | None = None, limit: int = 15,
         in_stock_only: bool = False, show_rejected: bool = False,
         considered: int | None = None) -> RankResult:
    """Rank the catalog's rows as substitutes for ``requirement`` (data already loaded).

    ``stock_qty`` is aligned with the catalog rows; ``history`` maps a substitute's normalised
    key to what the swap log says about it for this original; ``locations`` maps keys to drawer
    paths (used only for the rows returned). With ``show_rejected`` the best ``limit`` rows of
    the wrong polarity or kind follow, with verdict ``incompatible`` and the reason.

    ``catalog`` may hold only the requirement's polarity and kind (all a ranking without
    ``show_rejected`` reads); ``considered`` is then the whole catalog's row count, reported
    as :attr:`RankResult.considered` (default: ``catalog.size``).

    Score and verdict of every compatible row come from :func:`group_scores`; the rows
    returned are detailed from the same checks (:attr:`partsdb.ranking.fastpath.Scores.detail`).
    """
    stress = stress or Stress()
    policy = policy or BUILTIN_POLICIES[DEFAULT_POLICY]
    weights = weights or DEFAULT_WEIGHTS
    if isinstance(limit, bool) or not isinstance(limit, int) or limit < 1:
        raise SpecError(f"limit: {limit!r} is not valid; expected a whole number above 0")
    if stock_qty is not None and stock_qty.shape[0] != catalog.size:
        raise SpecError(f"stock_qty: {stock_qty.shape[0]} rows for a catalog of {catalog.size}")
    original = catalog.index_of(requirement.designation)
    hist = history_scores(catalog, history)
    rows, view = catalog.group(requirement.polarity, requirement.kind)
    keep: np.ndarray | None = None
    if in_stock_only:
        # The group's cached tables stay in use: rows out of stock are masked, not dropped.
        keep = stock_qty.take(rows) > 0 if stock_qty is not None else \
            np.zeros(rows.shape[0], dtype=bool)
    # The original itself is left out of its own list (by position, without a gather).
    exclude: int | None = None
    if original is not None:
        place = int(np.searchsorted(rows, original))
        if place < rows.shape[0] and rows[place] == original:
            exclude = place
    scored = group_scores(view, rows, requirement, stress, policy, weights, stock_qty, hist,
                           limit, keep, exclude)
    at = scored.positions
    if at is None:
        top = _top(scored.score, scored.verdict, view, limit, exclude, keep)
    else:
        # Only the rows that can be returned were scored: select among them, by their place in
        # the group (keys, tie-break), then map back to group positions.
        sub_exclude: int | None = None
        if exclude is not None:
            j = int(np.searchsorted(at, exclude))
            if j < at.shape[0] and at[j] == exclude:
                sub_exclude = j
        top = at[_top(scored.score, scored.verdict, view, limit, sub_exclude,
                      None if keep is None else keep[at], at)]
    ev = scored.detail(top)
    candidates = _candidates(catalog, ev, None, requirement, stress, policy, weights, history,
                             locations)
    compatible = int(rows.shape[0]) if keep is None else int(np.count_nonzero(keep))
    if exclude is not None and (keep is None or keep[exclude]):
        compatible -= 1
    if show_rejected:
        rrows = catalog.rejected(requirement.polarity, requirement.kind)
        if in_stock_only:
            rrows = rrows[stock_qty[rrows] > 0] if stock_qty is not None else rrows[:0]
        rview = catalog.take(rrows)
        rev = evaluate(rview, rrows, requirement, stress, policy, weights, stock_qty, hist)
        rtop = _top(rev.score, np.zeros_like(rev.verdict), rview, limit)
        reasons = []
        for i in rrows.take(rtop).tolist():
            why = []
            pol, kind = _name(POLARITIES, catalog.polarity[i]), _name(KINDS, catalog.kind[i])
            if pol != requirement.polarity:
                why.append(f"polarity {pol or 'unknown'}, need {requirement.polarity}")
            if kind != requirement.kind:
                why.append(f"kind {kind or 'unknown'}, need {requirement.kind}")
            reasons.append("; ".join(why))
        candidates += _candidates(catalog, rev, rtop, requirement, stress, policy, weights,
                                  history,
                                  locations, reasons)
    return RankResult(requirement, stress, policy, weights, tuple(candidates),
                      catalog.size if considered is None else considered, compatible)


def _floats_or_none(values: np.ndarray) -> list[float | None]:
    return [None if v != v else v for v in values.astype(float).tolist()]  # NaN: None


def _candidates(cat: CatalogColumns, ev: Evaluation, at: np.ndarray | None, req: Requirement,
                stress: Stress, policy: Policy, weights: Weights, history: Mapping[str, PastSwaps] | None,
                locations: Mapping[str, Sequence[str]] | None,
                rejected: Sequence[str] | None = None) -> list[Candidate]:
    """The rows at positions ``at`` of the evaluation (None: all, in order), in that order, as
    readable candidates.

    Read column by column (one gather per check for all the rows, then plain Python values);
    ``rejected`` gives, per row, why it is not a substitute (verdict ``incompatible``).
    """
    if at is None:
        def pick(values: np.ndarray) -> np.ndarray:
            return values
    else:
        at = np.asarray(at, dtype=np.intp).reshape(-1)

        def pick(values: np.ndarray) -> np.ndarray:
            return values.take(at)
    grows = pick(ev.rows)
    k = grows.shape[0]
    if k == 0:
        return []
    devs = cat.devices_at(grows)
    checks: list[list[Check]] = [[] for _ in range(k)]
    shown: list[dict[str, tuple[str, str]]] = [{} for _ in range(k)]
    applicable, known = [0] * k, [0] * k
    needs: dict[str, list[float | None]] = {}
    for name in PARAMETERS:
        col = ev.columns[name]
        status = [STATUSES[c] for c in pick(col.status).tolist()]
        if name in FIT_CODES:
            need_text = getattr(req, name)
            for j in range(k):
                off_text = devs[j][name]
                checks[j].append(Check(name, None, None, None, status[j],
                                       fit_note(name, need_text, off_text, status[j]),
                                       FIT_CODES[name] if status[j] == "marginal" else ""))
                shown[j][name] = (need_text or "—", off_text or "—")
                if col.basis != "none":
                    applicable[j] += 1
                    known[j] += status[j] != "unknown"
            continue
        if isinstance(col.need, np.ndarray):
            need_at = _floats_or_none(pick(col.need))
        else:
            need_at = [None if col.need is None else _num(col.need)] * k
        needs[name] = need_at
        offered = _floats_or_none(pick(col.offered))
        ratios: list[float | None] = [None] * k if col.ratio is None else [
            v if math.isfinite(v) else None for v in pick(col.ratio).astype(float).tolist()]
        basis = col.basis
        sinks = [None] * k if col.extra is None else _floats_or_none(pick(col.extra))
        for j in range(k):
            need, off = need_at[j], offered[j]
            if basis != "none":
                applicable[j] += 1
                known[j] += status[j] != "unknown"
            checks[j].append(Check(name, need, off, ratios[j], status[j],
                                   rating_note(name, basis, need, off, req, stress, policy,
                                               devs[j], sinks[j], status[j]),
                                   gain_code(req, devs[j]) if name == "hfe" else "",
                                   sinks[j] if name == "ptot" else None))
            shown[j][name] = (_shown(name, need, req, basis), _shown(name, off, devs[j]))

    subs = {name: pick(ev.columns[name].sub).astype(float).tolist() for name in PARAMETERS}
    w = weights.as_dict()
    total_weight = weights.total()
    full = {name: 100.0 * weight / total_weight for name, weight in w.items()}
    stock = pick(ev.stock).tolist()
    hist = pick(ev.history).astype(float).tolist()
    score = pick(ev.score).astype(float).tolist()
    verdict = pick(ev.verdict).tolist()
    case_rated = cat.case_rated.take(grows).tolist()
    free_air = cat.free_air.take(grows).astype(float).tolist()
    tj_eff = cat.tj_effective.take(grows).astype(float).tolist()
    allowed = pick(ev.allowed_power).astype(float).tolist()
    extra = ev.columns["ptot"].extra
    sink_needed = [None] * k if extra is None else _floats_or_none(pick(extra))
    out = []
    for j in range(k):
        dev = devs[j]
        key = dev["key"]
        flags: list[Flag] = []
        if rejected is not None:
            flags.append(Flag("incompatible", f"not a substitute: {rejected[j]}"))
        _flags(flags, dev, req, stress, needs["ft"][j], case_rated[j], free_air[j],
               allowed[j], tj_eff[j], sink_mode(req, stress), sink_needed[j])
        confidence = known[j] / applicable[j] if applicable[j] else 1.0
        if confidence < policy.min_confidence - 1e-9:
            flags.append(Flag("low-confidence",
                              f"only {known[j]} of {applicable[j]} checks could be compared "
                              f"({confidence:.0%}, {policy.name} asks for at least "
                              f"{policy.min_confidence:.0%}): at best marginal; read the "
                              "datasheet for the missing values"))
        past = (history or {}).get(key)
        if past is not None and (past.worked or past.failed):
            jobs = f" (jobs {', '.join(past.jobs)})" if past.jobs else ""
            if past.worked:
                flags.append(Flag("worked-before",
                                  f"used for {req.designation} before and worked {past.worked} "
                                  f"time(s){jobs}: score bonus"))
            if past.failed:
                flags.append(Flag("failed-before",
                                  f"used for {req.designation} before and failed {past.failed} "
                                  f"time(s){jobs}: score penalty; read the swap log notes"))
        row_subs = {name: subs[name][j] for name in PARAMETERS}
        row_subs["stock"] = float(stock[j] > 0)
        row_subs["history"] = hist[j]
        parts = {name: 100.0 * w[name] * row_subs[name] / total_weight for name in row_subs}
        qty = int(stock[j])
        out.append(Candidate(
            dev["designation"], key, score[j],
            VERDICTS[INCOMPATIBLE] if rejected is not None else VERDICTS[verdict[j]], qty,
            tuple((locations or {}).get(key, ())) if qty > 0 else (), tuple(checks[j]),
            tuple(flags), confidence, row_subs, dev,
            shown[j], parts, full))
    return out


def _shown(name: str, value: float | None, source: Requirement | Mapping[str, Any],
           basis: str = "") -> str:
    """A check's need or offered value as shown (the hFE window as a window; a junction
    temperature estimate marked as one, never as a need)."""
    if name == "tj_max" and basis == "stress":
        return "—" if value is None else f"(est. Tj {value:.0f} °C)"
    if name == "hfe" and value is not None:
        lo, hi = (source.hfe_min, source.hfe_max) if isinstance(source, Requirement) else \
            (source["hfe_min"], source["hfe_max"])
        return f"{lo:g}..{hi:g}" if hi is not None and lo is not None else f"{value:g}"
    if name == "tj_max" and value is not None:
        return f"{value:.0f} °C"
    return fmt(value, UNIT[name])


def _flags(flags: list[Flag], dev: dict[str, Any], req: Requirement,
           stress: Stress, ft_need: float | None, case_rated: bool, free_air: float,
           allowed: float, tj_effective: float, mode: str,
           sink_needed: float | None = None) -> None:
    """The flags of one candidate: facts no check covers (a fit that needs work, or a gain far
    off the need, is its check's status, note and code, not a flag)."""
    for name, stressed in (("vceo", stress.vce_peak), ("vcbo", stress.vce_peak),
                           ("vebo", stress.veb_peak), ("ic_max", stress.ic_peak)):
        original = getattr(req, name)
        offered = dev[name]
        if stressed is not None and original is not None and offered is not None \
                and offered < original:
            flags.append(Flag("below-original", below_original(name, offered, original)))
    if case_rated and dev["ptot"] is not None:
        flags.append(Flag("case-rating-converted",
                          case_rating_message(dev, stress, free_air, allowed, mode,
                                              sink_needed)))
    if dev["tj_max"] is None and dev["ptot"] is not None:
        flags.append(Flag("tj-assumed", f"Tj max not in the record: {tj_effective:g} °C "
                                        f"assumed for {dev['material']} to derate Ptot"))
    # judged against the original's fT, or the need when there is no original's
    ft_ref = req.ft if req.ft is not None else ft_need
    if dev["ft"] is not None and ft_ref is not None and dev["ft"] > FT_FAST_FACTOR * ft_ref:
        flags.append(Flag("much-faster", much_faster(dev["ft"], req.ft is not None)))


def assess(device: Device, requirement: Requirement, stress: Stress | None = None,
           policy: Policy | None = None, weights: Weights | None = None) -> Candidate:
    """One device against a requirement, with the same checks as :func:`rank`.

    A device of the wrong polarity or kind comes back with verdict ``incompatible``; the
    original itself is not excluded here (the swap-log audit re-checks recorded swaps).
    """
    stress = stress or Stress()
    policy = policy or BUILTIN_POLICIES[DEFAULT_POLICY]
    weights = weights or DEFAULT_WEIGHTS
    cat = CatalogColumns.from_devices([device])
    rows = np.arange(1)
    ev = evaluate(cat, rows, requirement, stress, policy, weights, None, None)
    reasons = []
    if device.polarity != requirement.polarity:
        reasons.append(f"polarity {device.polarity}, need {requirement.polarity}")
    if device.kind != requirement.kind:
        reasons.append(f"kind {device.kind}, need {requirement.kind}")
    return _candidates(cat, ev, None, requirement, stress, policy, weights, None, None,
                       ["; ".join(reasons)] if reasons else None)[0]
