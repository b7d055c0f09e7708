"""Ranking field-effect substitutes: the hard constraints, the score, the verdict, the order.

A candidate must be the original's kind (a MOSFET never for a JFET), channel (``n``/``p``)
and, for MOSFETs, mode (enhancement or depletion; a blank mode is enhancement, as the record
rules say). FET groups are small (hundreds in a workshop), so every candidate is checked row by row
by :mod:`partsdb.ranking.fet_checks` (the reference path; the grouped fast path of
:mod:`partsdb.ranking.fastpath` covers the bipolar groups only).

Score = 100 x sum(w_i s_i) / sum(w_i) over the checks' sub-scores with
:data:`~partsdb.ranking.fet_checks.MOSFET_WEIGHTS` or
:data:`~partsdb.ranking.fet_checks.JFET_WEIGHTS`, plus stock and history with the configured
weights. Verdict: the worst check; an unknown Vds, Id max, Idss or Ptot against a known need
makes it ``unverified``; a confidence below the policy's minimum keeps it from ``suitable``.
Order: verdict, then score (higher first), then the normalised designation.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from partsdb.cautions import cautions_for
from partsdb.derating import (
    INCOMPATIBLE,
    REL_TOL,
    SUITABLE,
    UNVERIFIED,
    V_MARGINAL,
    V_UNDER,
    VERDICTS,
    Policy,
)
from partsdb.designations import normalize
from partsdb.device import FET_KINDS
from partsdb.ranking.fet_checks import (
    JFET_WEIGHTS,
    MOSFET_WEIGHTS,
    PRIMARY,
    Assessment,
    jfet_checks,
    mosfet_checks,
)
from partsdb.ranking.model import PastSwaps, SpecError, Stress, Weights
from partsdb.ranking.result import Candidate, Flag, RankResult

CHANNELS: tuple[str, ...] = ("n", "p")
MODES: tuple[str, ...] = ("enhancement", "depletion")

DEVICE_KEYS: tuple[str, ...] = (
    "designation", "kind", "polarity", "mode", "material", "vds", "vgs_max", "id_max",
    "id_max_ref", "ptot", "ptot_ref",
    "tj_max", "rth_jc", "rds_on", "rds_on_vgs", "rds_on_id", "vgs_th_min", "vgs_th_max", "qg",
    "qgd", "ciss", "body_diode", "trr", "vgs_off_min", "vgs_off_max", "idss_min", "idss_max",
    "yfs", "yfs_id", "en", "package", "pinout")
"""The record fields a FET candidate carries in JSON (SI units; None when not given)."""


@dataclass(frozen=True)
class FetRequirement:
    """What a field-effect substitute must offer: the original's stored record."""

    kind: str
    polarity: str
    mode: str | None
    original: Any
    """The original's record (an object with the device attributes)."""
    designation: str | None = None
    source: str = "stored"

    def __post_init__(self) -> None:
        if self.kind not in FET_KINDS:
            raise SpecError(f"kind: {self.kind!r} is not valid; expected mosfet or jfet")
        if self.polarity not in CHANNELS:
            raise SpecError(f"polarity: {self.polarity!r} is not valid; expected the channel, "
                            "n or p")
        if self.mode is not None and self.mode not in MODES:
            raise SpecError(f"mode: {self.mode!r} is not valid; expected enhancement or "
                            "depletion")

    @classmethod
    def from_device(cls, device: Any) -> FetRequirement:
        return cls(kind=device.kind, polarity=device.polarity,
                   mode=mode_of(device) if device.kind == "mosfet" else None,
                   original=device, designation=device.designation)

    @property
    def key(self) -> str | None:
        return normalize(self.designation) if self.designation else None

    @property
    def package(self) -> str | None:
        return self.value("package")

    @property
    def pinout(self) -> str | None:
        return self.value("pinout")

    def value(self, name: str) -> Any:
        return getattr(self.original, name, None)

    def to_json(self) -> dict[str, Any]:
        out = {"kind": self.kind, "polarity": self.polarity, "mode": self.mode,
               "designation": self.designation, "source": self.source}
        out.update({k: self.value(k) for k in DEVICE_KEYS if k not in out})
        return out


def mode_of(dev: Any) -> str:
    """A MOSFET's mode; a blank one is enhancement (the record's rule, ``device.FIELDS``)."""
    return getattr(dev, "mode", None) or "enhancement"


def incompatibility(req: FetRequirement, dev: Any) -> str:
    """Why ``dev`` cannot replace the original ("" when it can)."""
    why = []
    if dev.kind != req.kind:
        why.append(f"kind {dev.kind}, need {req.kind}"
                   + (" (a MOSFET never for a JFET)" if req.kind == "jfet" else ""))
    if dev.polarity != req.polarity:
        why.append(f"channel {dev.polarity}, need {req.polarity}")
    if req.kind == "mosfet" and dev.kind == "mosfet" and mode_of(dev) != req.mode:
        why.append(f"mode {mode_of(dev)}, need {req.mode}")
    return "; ".join(why)


def _assess(req: FetRequirement, dev: Any, stress: Stress, policy: Policy,
            memo: dict[Any, Any] | None = None) -> Assessment:
    check = mosfet_checks if req.kind == "mosfet" else jfet_checks
    return check(req.original, dev, stress, policy, memo)


_VERDICT_OF = {"ok": SUITABLE, "marginal": V_MARGINAL, "under-rated": V_UNDER,
               "unknown": SUITABLE}


@dataclass(frozen=True)
class _Summary:
    """What the checks alone give a candidate: worst verdict, confidence, weighted sub-scores."""

    verdict: int
    applicable: int
    known: int
    points: float
    """sum of w_i s_i over the checks."""


def _summary(a: Assessment, policy: Policy, table: Mapping[str, float],
             memo: dict[Any, Any] | None) -> _Summary:
    key = ("summary", *map(id, a.rows))  # rows are shared through the memo: same rows, same sum
    hit = memo.get(key) if memo is not None else None
    if hit is not None:
        return hit  # type: ignore[no-any-return]
    worst = SUITABLE
    applicable = known = 0
    points = 0.0
    for r in a.rows:
        points += table[r.check.parameter] * r.sub
        if not r.applicable:
            continue
        applicable += 1
        status = r.check.status
        known += status != "unknown"
        worst = max(worst, _VERDICT_OF[status])
        if status == "unknown" and r.check.parameter in PRIMARY:
            worst = max(worst, UNVERIFIED)
    confidence = known / applicable if applicable else 1.0
    if confidence < policy.min_confidence - REL_TOL:
        worst = max(worst, V_MARGINAL)
    out = _Summary(worst, applicable, known, points)
    if memo is not None:
        memo[key] = out
    return out


def _history_score(past: PastSwaps | None) -> float:
    if past is not None and past.worked and not past.failed:
        return 1.0
    if past is not None and past.failed and not past.worked:
        return 0.0
    return 0.5


def _score(summary: _Summary, qty: int, hist: float, weights: Weights, total_w: float) -> float:
    """100 x (sum w_i s_i + w_stock s_stock + w_history s_history) / sum w."""
    return 100.0 * (summary.points + weights.stock * (1.0 if qty > 0 else 0.0)
                    + weights.history * hist) / total_w


def _candidate(req: FetRequirement, dev: Any, a: Assessment, policy: Policy, weights: Weights,
               qty: int, places: Sequence[str], past: PastSwaps | None,
               rejected: str | None = None) -> Candidate:
    table = MOSFET_WEIGHTS if req.kind == "mosfet" else JFET_WEIGHTS
    w = dict(table)
    w["stock"], w["history"] = weights.stock, weights.history
    total_w = sum(w.values())
    summary = _summary(a, policy, table, None)
    hist = _history_score(past)
    subs = {r.check.parameter: r.sub for r in a.rows}
    subs["stock"] = 1.0 if qty > 0 else 0.0
    subs["history"] = hist
    parts = {n: 100.0 * w[n] * subs[n] / total_w for n in subs if n in w}
    flags = list(a.flags)
    if past is not None and (past.worked or past.failed):
        jobs = f" (jobs {', '.join(past.jobs)})" if past.jobs else ""
        if past.worked:
            flags.append(Flag("worked-before", f"used for {req.designation} before and worked "
                                               f"{past.worked} time(s){jobs}: score bonus"))
        if past.failed:
            flags.append(Flag("failed-before", f"used for {req.designation} before and failed "
                                               f"{past.failed} time(s){jobs}: score penalty; "
                                               "read the swap log notes"))
    confidence = summary.known / summary.applicable if summary.applicable else 1.0
    if confidence < policy.min_confidence - REL_TOL:
        flags.append(Flag("low-confidence",
                          f"only {summary.known} of {summary.applicable} checks could be "
                          f"compared ({confidence:.0%}, {policy.name} asks for at least "
                          f"{policy.min_confidence:.0%}): at best marginal; read the "
                          "datasheet for the missing values"))
    if rejected:
        flags.insert(0, Flag("incompatible", rejected))
    key = normalize(dev.designation)
    device = {k: getattr(dev, k, None) for k in DEVICE_KEYS}
    device["key"] = key
    return Candidate(dev.designation, key, _score(summary, qty, hist, weights, total_w),
                     VERDICTS[INCOMPATIBLE] if rejected else VERDICTS[summary.verdict], qty,
                     tuple(places) if qty > 0 else (), tuple(r.check for r in a.rows),
                     tuple(flags), confidence, subs, device,
                     {r.check.parameter: r.shown for r in a.rows}, parts,
                     {n: 100.0 * v / total_w for n, v in w.items()})


def rank_fets(devices: Sequence[Any], requirement: FetRequirement, stress: Stress | None = None,
              policy: Policy | None = None, weights: Weights | None = None,
              stock: Mapping[str, int] | None = None, *,
              history: Mapping[str, PastSwaps] | None = None,
              locations: Mapping[str, Sequence[str]] | None = None, limit: int = 15,
              in_stock_only: bool = False, show_rejected: bool = False,
              considered: int | None = None) -> RankResult:
    """Rank ``devices`` (any kinds; the incompatible ones are left out, or listed last as
    ``incompatible`` with ``show_rejected``) as substitutes for a FET original.

    Every compatible row is checked and scored (the checks once per distinct value of the
    fields each reads, see :data:`partsdb.ranking.fet_checks.Memo`); only the rows returned
    are detailed as candidates."""
    from partsdb.derating import BUILTIN_POLICIES, DEFAULT_POLICY
    from partsdb.ranking.model import DEFAULT_WEIGHTS

    stress = stress or Stress()
    policy = policy or BUILTIN_POLICIES[DEFAULT_POLICY]
    weights = weights or DEFAULT_WEIGHTS
    if isinstance(limit, bool) or not isinstance(limit, int) or limit < 1:
        raise SpecError(f"limit: {limit!r} is not valid; expected a whole number above 0")
    stock = stock or {}
    history = history or {}
    own = requirement.key
    table = MOSFET_WEIGHTS if requirement.kind == "mosfet" else JFET_WEIGHTS
    total_w = sum(table.values()) + weights.stock + weights.history
    memo: dict[Any, Any] = {}
    good: list[tuple[int, float, str, Any, Assessment, int]] = []
    bad: list[tuple[float, str, Any, Assessment, int, str]] = []
    for dev in devices:
        key = normalize(dev.designation)
        if key == own:
            continue
        qty = int(stock.get(key, 0))
        if in_stock_only and qty <= 0:
            continue
        why = incompatibility(requirement, dev)
        if why:
            if show_rejected:
                a = _assess(requirement, dev, stress, policy) if dev.kind in FET_KINDS \
                    else Assessment()
                points = _score(_summary(a, policy, table, None), qty, 0.5, weights, total_w)
                bad.append((points, key, dev, a, qty, why))
            continue
        a = _assess(requirement, dev, stress, policy, memo)
        summary = _summary(a, policy, table, memo)
        score = _score(summary, qty, _history_score(history.get(key)), weights, total_w)
        good.append((summary.verdict, score, key, dev, a, qty))
    good.sort(key=lambda g: (g[0], -g[1], g[2]))
    bad.sort(key=lambda b: (-b[0], b[1]))
    candidates = [_candidate(requirement, dev, a, policy, weights, qty,
                             (locations or {}).get(key, ()), history.get(key))
                  for _, _, key, dev, a, qty in good[:limit]]
    if show_rejected:
        candidates += [_candidate(requirement, dev, a, policy, weights, qty,
                                  (locations or {}).get(key, ()), None, why)
                       for _, key, dev, a, qty, why in bad[:limit]]
    return RankResult(requirement, stress, policy, weights, tuple(candidates),
                      len(devices) if considered is None else considered, len(good),
                      cautions_for([requirement.kind]))


def assess_fet(device: Any, requirement: FetRequirement, stress: Stress | None = None,
               policy: Policy | None = None, weights: Weights | None = None) -> Candidate:
    """One device against a FET original, with the checks of :func:`rank_fets`."""
    from partsdb.derating import BUILTIN_POLICIES, DEFAULT_POLICY
    from partsdb.ranking.model import DEFAULT_WEIGHTS

    stress = stress or Stress()
    policy = policy or BUILTIN_POLICIES[DEFAULT_POLICY]
    why = incompatibility(requirement, device)
    a = _assess(requirement, device, stress, policy) if device.kind in FET_KINDS else Assessment()
    return _candidate(requirement, device, a, policy, weights or DEFAULT_WEIGHTS, 0, (), None,
                      why or None)


__all__ = ["CHANNELS", "FET_KINDS", "MODES", "FetRequirement", "assess_fet", "incompatibility",
           "rank_fets"]
