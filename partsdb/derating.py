"""Derating policies: how far below its ratings a part should run, the grading rule and its words.

A policy multiplies each rating by a factor to get the largest stress it allows; a stress within
that is ``ok``, above it but within the rating ``marginal``, above the rating ``under-rated``,
and a missing value ``unknown`` (:data:`STATUSES`). :func:`grade` is the one grading function:
``partsdb check`` (:mod:`partsdb.operating`), the substitution ranking
(:mod:`partsdb.ranking.checks`) and the job sheets all grade through it, on plain floats and on
numpy arrays alike. A candidate's verdict is its worst check in :data:`VERDICTS` words.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from partsdb.errors import InvalidInput

STATUSES: tuple[str, ...] = ("ok", "marginal", "under-rated", "unknown")
"""The status of one check, by code: :func:`grade` returns the index into this tuple."""
OK, MARGINAL, UNDER, UNKNOWN = 0, 1, 2, 3
VERDICTS: tuple[str, ...] = ("suitable", "marginal", "unverified", "under-rated", "incompatible")
"""A candidate's verdict, in ranking order: its worst check (ok and unknown: suitable);
``unverified`` when its Vceo, Ic max or Ptot is unknown where the need is known (it cannot be
confirmed); ``incompatible`` when the polarity or kind is wrong."""
SUITABLE, V_MARGINAL, UNVERIFIED, V_UNDER, INCOMPATIBLE = range(5)

REL_TOL = 1e-9
"""Relative tolerance of every grade boundary: a stress equal to a limit up to floating-point
rounding (2.1 W against 0.7 x 3 W) is at the limit, not above it."""

DEFAULT_MIN_CONFIDENCE = 0.70
"""Share of the applicable checks that must be known for a ``suitable`` verdict (common
practice: most of the ratings read off the datasheet); per policy key ``min_confidence``."""


@dataclass(frozen=True)
class Policy:
    """A named derating policy. Factors are fractions of the rating (0 < f <= 1)."""

    name: str
    voltage: float
    """Largest Vce (DC + peak + transient) as a fraction of Vceo; also applied to Vcbo."""
    current: float
    """Largest Ic as a fraction of Ic max."""
    power: float
    """Largest dissipation as a fraction of Ptot derated to the operating temperature."""
    tj_margin: float
    """The junction must stay this many kelvin below Tj max..."""
    tj_cap: float | None
    """...and, when set, at or below this absolute temperature in °C."""
    source: str
    description: str = ""
    min_confidence: float = DEFAULT_MIN_CONFIDENCE
    """Below this share of known checks a candidate is at best marginal."""
    extra: dict[str, Any] = field(default_factory=dict)

    def factors(self) -> dict[str, float | None]:
        return {"voltage": self.voltage, "current": self.current, "power": self.power,
                "tj_margin": self.tj_margin, "tj_cap": self.tj_cap}

    def tj_limit(self, tj_max: Any) -> Any:
        """Highest junction temperature the policy allows for a part rated ``tj_max``."""
        limit = np.asarray(tj_max, dtype=float) - self.tj_margin
        if self.tj_cap is not None:
            limit = np.minimum(limit, self.tj_cap)
        return limit if np.ndim(limit) else float(limit)


BUILTIN_POLICIES: dict[str, Policy] = {
    # A repair bench's own rule (common practice, no standard): keep a fifth of headroom on
    # voltage and current and 30 % on power; junction 20 K below its maximum.
    "workshop": Policy(
        name="workshop", voltage=0.80, current=0.80, power=0.70, tj_margin=20.0, tj_cap=None,
        source="common practice (bench rule, not a published standard)",
        description="General repair work: 80 % voltage and current, 70 % power, Tj 20 K below max.",
    ),
    # MIL-STD-975M (NASA Standard Electrical, Electronic and Electromechanical Parts List,
    # 1994), Appendix A, derating of bipolar transistors: power 0.50, current 0.75,
    # voltage (DC + AC peak + transient) 0.75, junction at or below 125 °C.
    # (Read in a secondary copy; see DOMAIN notes.)
    "mil-std-975m": Policy(
        name="mil-std-975m", voltage=0.75, current=0.75, power=0.50, tj_margin=0.0, tj_cap=125.0,
        source="MIL-STD-975M Appendix A, transistors (bipolar)",
        description="High reliability: 75 % voltage and current, 50 % power, Tj <= 125 °C.",
    ),
    # NASA EEE-INST-002 (2003), section on transistors, bipolar: power 0.50, current 0.75,
    # voltage 0.75, Tj <= 125 °C or Tj max - 40 K, whichever is lower. Values from memory.
    "eee-inst-002": Policy(
        name="eee-inst-002", voltage=0.75, current=0.75, power=0.50, tj_margin=40.0,
        tj_cap=125.0,
        source="NASA EEE-INST-002, bipolar transistors (factors from memory)",
        description="High reliability, stricter on Tj: 75 % V and I, 50 % P, Tj <= min(125, max-40).",
    ),
}

DEFAULT_POLICY = "workshop"


class PolicyError(InvalidInput):
    """A derating policy that cannot be used; the message names the key and value."""


def policy_from_mapping(name: str, data: Mapping[str, Any]) -> Policy:
    """Build a user policy from a config table; every factor must lie in (0, 1]."""
    known = {"voltage", "current", "power", "tj_margin", "tj_cap", "source", "description",
             "min_confidence"}
    unknown = set(data) - known
    if unknown:
        raise PolicyError(f"policy {name!r}: unknown keys {sorted(unknown)}; known: {sorted(known)}")
    base = BUILTIN_POLICIES[DEFAULT_POLICY]
    values: dict[str, Any] = {}
    for key in ("voltage", "current", "power"):
        v = data.get(key, getattr(base, key))
        if not isinstance(v, int | float) or not 0 < v <= 1:
            raise PolicyError(f"policy {name!r}: {key} = {v!r}; expected a fraction in (0, 1]")
        values[key] = float(v)
    margin = data.get("tj_margin", 0.0)
    cap = data.get("tj_cap")
    if not isinstance(margin, int | float) or margin < 0:
        raise PolicyError(f"policy {name!r}: tj_margin = {margin!r}; expected kelvin >= 0")
    if cap is not None and not isinstance(cap, int | float):
        raise PolicyError(f"policy {name!r}: tj_cap = {cap!r}; expected a temperature in °C")
    conf = data.get("min_confidence", DEFAULT_MIN_CONFIDENCE)
    if isinstance(conf, bool) or not isinstance(conf, int | float) or not 0 <= conf <= 1:
        raise PolicyError(f"policy {name!r}: min_confidence = {conf!r}; expected a fraction in "
                          "[0, 1]")
    return Policy(name=name, tj_margin=float(margin), tj_cap=None if cap is None else float(cap),
                  min_confidence=float(conf),
                  source=str(data.get("source", "user policy")),
                  description=str(data.get("description", "")), **values)


def grade(stress: Any, rating: Any, factor: Any = 1.0, *, limit: Any = None) -> Any:
    """Status code of a stress against a rating (an index into :data:`STATUSES`).

    ``OK`` when stress <= ``limit`` (default: factor x rating), ``MARGINAL`` when stress <=
    rating (both compared with the relative tolerance :data:`REL_TOL`), ``UNDER`` (under-rated)
    above the rating, ``UNKNOWN`` when a value is missing (None
    or NaN). Scalars give an int, arrays an int8 array of the broadcast shape; ``STATUSES[code]``
    is the word.
    """
    r = np.asarray(rating, dtype=float)
    if limit is None and isinstance(stress, float) and not math.isnan(stress) and r.ndim:
        # One stress for every row (a ranking): the same comparisons, fewer array calls.
        out = np.full(r.shape, UNDER, dtype=np.int8)
        slack = 1.0 + REL_TOL
        out[stress <= r * slack] = MARGINAL
        out[stress <= factor * r * slack] = OK
        out[np.isnan(r)] = UNKNOWN
        return out
    s = np.asarray(np.nan if stress is None else stress, dtype=float)
    r = np.asarray(np.nan if rating is None else rating, dtype=float)
    top = factor * r if limit is None else np.asarray(limit, dtype=float)
    out = np.full(np.broadcast(s, r, top).shape, UNDER, dtype=np.int8)
    with np.errstate(invalid="ignore"):
        out[s <= r + REL_TOL * np.abs(r)] = MARGINAL
        out[s <= top + REL_TOL * np.abs(top)] = OK
    out[np.isnan(s) | np.isnan(r)] = UNKNOWN
    return int(out) if out.ndim == 0 else out
