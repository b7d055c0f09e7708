"""What a ranking returns: checks, flags, problems, candidates and the result (frozen values).

A :class:`Check` is one parameter of one candidate against the need; a :class:`Flag` is a fact
no check covers (a case rating converted, a past swap, a rating below the original's under a
given stress, ...). :meth:`Candidate.problems` lists both as structured :class:`Problem` items,
which the faces (CLI, TUI, job sheets) render without reading the prose back.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from partsdb.cautions import SAFETY_CAUTIONS
from partsdb.derating import Policy
from partsdb.ranking.model import LABEL, Requirement, Stress, Weights
from partsdb.ranking.notes import unknown_data_message

if TYPE_CHECKING:
    from partsdb.ranking.fet_engine import FetRequirement

ORDER_TEXT = ("verdict first (suitable, marginal, unverified, under-rated), then score "
              "(higher first); the score's parts are points per criterion")
"""How a ranking is ordered, as the faces say it above the list."""


@dataclass(frozen=True, slots=True)
class Check:
    """One parameter of one candidate against the need."""

    parameter: str
    need: float | None
    offered: float | None
    ratio: float | None
    """offered / need: 1.0 just meets it (tj_max: temperature rise available / used)."""
    status: str
    """ok, marginal, under-rated or unknown (:data:`partsdb.derating.STATUSES`)."""
    note: str = ""
    """A sentence for the technician: the figures compared, and what to do when not ok."""
    code: str = ""
    """A short code for what needs doing when the check is not ok (``re-form-leads``,
    ``other-outline``, ``material-change``, ``low-gain``, ``high-gain``), else ""."""
    heatsink_needed: float | None = None
    """ptot only: the largest sink-to-ambient K/W that keeps the junction within the policy
    (``--power`` given, no ``--heatsink``, case rating); None when no sink is needed (or the
    question does not arise), 0 or below when no sink suffices."""

    def to_json(self) -> dict[str, Any]:
        # (the code travels in the candidate's "flags" and "problems"; this object's keys are
        # a published contract)
        out = {"parameter": self.parameter, "need": self.need, "offered": self.offered,
               "ratio": self.ratio, "status": self.status, "note": self.note}
        if self.parameter == "ptot":
            out["heatsink_needed"] = (None if self.heatsink_needed is None
                                      else round(self.heatsink_needed, 3))
        return out


@dataclass(frozen=True, slots=True)
class Flag:
    """A fact about a candidate that no check covers (``code``), and what to do."""

    code: str
    message: str

    def to_json(self) -> dict[str, str]:
        return {"code": self.code, "message": self.message}


@dataclass(frozen=True, slots=True)
class Problem:
    """One thing to look at before fitting a candidate: a check that is not ok, or a flag."""

    parameter: str
    """The check's parameter, or the flag's code."""
    status: str
    """The check's status (marginal, under-rated, unknown), or ``flag``."""
    need: str
    """The need as shown (with unit; "" for a flag)."""
    offered: str
    """The candidate's value as shown (with unit; "" for a flag)."""
    note: str
    """The check's note or the flag's message."""
    code: str = ""
    """A short code for tables: the flag's code, or a fit's that needs work (``re-form-leads``);
    "" for the other checks."""

    @property
    def is_flag(self) -> bool:
        return self.status == "flag"

    def to_json(self) -> dict[str, str]:
        return {"parameter": self.parameter, "status": self.status, "need": self.need,
                "offered": self.offered, "note": self.note, "code": self.code}


@dataclass(frozen=True, slots=True)
class Candidate:
    """One catalog part ranked as a substitute."""

    designation: str
    key: str
    score: float
    verdict: str
    """suitable, marginal, under-rated or incompatible (:data:`partsdb.derating.VERDICTS`)."""
    in_stock: int
    locations: tuple[str, ...]
    checks: tuple[Check, ...]
    flags: tuple[Flag, ...]
    confidence: float
    """Share of the applicable checks whose values are known on both sides (0..1)."""
    subscores: Mapping[str, float]
    device: Mapping[str, Any] = field(default_factory=dict)
    shown: Mapping[str, tuple[str, str]] = field(default_factory=dict)
    """Per check parameter, (need, offered) as shown with units (for :meth:`problems`)."""
    score_parts: Mapping[str, float] = field(default_factory=dict)
    """Points each criterion adds to the score, 100 x w_i x s_i / sum(w): they sum to it."""
    full_points: Mapping[str, float] = field(default_factory=dict)
    """Points each criterion would add at full marks, 100 x w_i / sum(w)."""

    def gains_and_losses(self, count: int = 2) -> tuple[list[tuple[str, float]],
                                                        list[tuple[str, float]]]:
        """The ``count`` criteria adding the most points, and the ``count`` losing the most
        against full marks (points short of 100 x w_i / sum(w)), largest first."""
        if not self.score_parts:
            return [], []
        gains = sorted(self.score_parts.items(), key=lambda kv: (-kv[1], kv[0]))[:count]
        losses = [(name, self.full_points.get(name, points) - points)
                  for name, points in self.score_parts.items()]
        losses = [kv for kv in losses if kv[1] > 0.05]
        losses.sort(key=lambda kv: (-kv[1], kv[0]))
        return [g for g in gains if g[1] > 0.05], losses[:count]

    def why(self) -> str:
        """The two largest gains and losses in points, such as ``+20 Vceo +15 Ic max / -8 fT
        -5 hFE``."""
        gains, losses = self.gains_and_losses()
        text = " ".join(f"+{p:.0f} {LABEL.get(n, n)}" for n, p in gains)
        if losses:
            text += " / " + " ".join(f"-{p:.0f} {LABEL.get(n, n)}" for n, p in losses)
        return text

    def check(self, parameter: str) -> Check:
        return next(c for c in self.checks if c.parameter == parameter)

    def problems(self) -> tuple[Problem, ...]:
        """The checks that are not ok (an unknown one only where there was a need), in check
        order, then the flags."""
        unknown = self.unknown()
        items = [Problem(c.parameter, c.status, *self.shown.get(c.parameter, ("—", "—")),
                         c.note, c.code)
                 for c in self.checks
                 if c.status in ("under-rated", "marginal") or c.parameter in unknown]
        items += [Problem(f.code, "flag", "", "", f.message, f.code) for f in self.flags]
        return tuple(items)

    def unknown(self) -> list[str]:
        """The parameters with a need but no value on the candidate's side to compare."""
        return [c.parameter for c in self.checks if c.status == "unknown"
                and self.shown.get(c.parameter, ("—",))[0] != "—"]

    def flag_codes(self) -> list[str]:
        """The flag codes, and the code of each check that needs work (:attr:`Check.code`)."""
        return [f["code"] for f in self._flags_json()]

    def _flags_json(self) -> list[dict[str, str]]:
        # A fit that needs work or a gain far off is a marginal check with a code, and missing
        # data an unknown check, not flags; the JSON lists them among the flags too, under
        # their long-standing codes.
        fits = [{"code": c.code, "message": c.note} for c in self.checks if c.code]
        unknown = self.unknown()
        return [f.to_json() for f in self.flags[:1] if f.code == "incompatible"] + fits + [
            f.to_json() for f in self.flags if f.code != "incompatible"] + (
            [{"code": "unknown-data", "message": unknown_data_message(unknown)}]
            if unknown else [])

    def to_json(self) -> dict[str, Any]:
        return {"designation": self.designation, "score": round(self.score, 1),
                "verdict": self.verdict, "in_stock": self.in_stock,
                "locations": list(self.locations), "confidence": round(self.confidence, 2),
                "checks": [c.to_json() for c in self.checks],
                "flags": self._flags_json(),
                "problems": [p.to_json() for p in self.problems()],
                "subscores": {k: round(v, 3) for k, v in self.subscores.items()},
                "score_parts": {k: round(v, 3) for k, v in self.score_parts.items()},
                "device": dict(self.device)}


@dataclass(frozen=True, slots=True)
class RankResult:
    """The ranked candidates with what they were ranked against."""

    requirement: Requirement | FetRequirement
    """The bipolar requirement, or a field-effect original's (:mod:`partsdb.ranking.fet_engine`)."""
    stress: Stress
    policy: Policy
    weights: Weights
    candidates: tuple[Candidate, ...]
    considered: int
    """Rows in the catalog."""
    compatible: int
    """Rows passing the hard constraints (and the in-stock filter), the original excluded."""
    cautions: tuple[str, ...] = SAFETY_CAUTIONS
    notes: tuple[str, ...] = ()

    def to_json(self) -> dict[str, Any]:
        return {
            "requirement": self.requirement.to_json(),
            "stress": self.stress.to_json(),
            "policy": {"name": self.policy.name, "factors": self.policy.factors(),
                       "source": self.policy.source, "description": self.policy.description},
            "weights": self.weights.as_dict(),
            "considered": self.considered,
            "compatible": self.compatible,
            "candidates": [c.to_json() for c in self.candidates],
            "notes": list(self.notes),
            "cautions": list(self.cautions),
        }
