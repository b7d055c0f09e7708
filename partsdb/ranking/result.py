"""What a ranking returns: checks, flags, problems, candidates and the result (frozen values).

A :class:`Check` is one parameter of one candidate against the need; a :class:`Flag` is a fact
no check covers (a case rating converted, a past swap, a rating below the original's under a
given stress, ...). :meth:`Candidate.problems` lists both as structured :class:`Problem` items,
which the faces (CLI, TUI, job sheets) render without reading the prose back.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from partsdb.cautions import SAFETY_CAUTIONS
from partsdb.derating import Policy
from partsdb.ranking.model import Requirement, Stress, Weights
from partsdb.ranking.notes import unknown_data_message


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

    def to_json(self) -> dict[str, Any]:
        # (the code travels in the candidate's "flags" and "problems"; this object's keys are
        # a published contract)
        return {"parameter": self.parameter, "need": self.need, "offered": self.offered,
                "ratio": self.ratio, "status": self.status, "note": self.note}


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
                "device": dict(self.device)}


@dataclass(frozen=True, slots=True)
class RankResult:
    """The ranked candidates with what they were ranked against."""

    requirement: Requirement
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
