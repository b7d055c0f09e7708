"""Thermal arithmetic: power derating with temperature and the junction-temperature chain.

Formulas (standard textbook and datasheet practice, e.g. any maker's "power derating curve"):

* Linear derating: P(T) = Ptot x (Tjmax - T) / (Tjmax - 25) between 25 °C and Tjmax, 0 beyond;
  T is the ambient for a free-air rating and the case for a case rating. Below 25 °C the rating
  is not raised (common practice).
* Thermal chain: Tj = Ta + P x (Rth j-c + Rth c-s + Rth s-a). The junction-to-reference
  resistance follows from the rating itself: Rth = (Tjmax - 25) / Ptot.

Every function takes floats or numpy arrays.
"""

from __future__ import annotations

from typing import Any

import numpy as np

T_RATING = 25.0
"""Reference temperature of Ptot ratings, °C."""

DEFAULT_CASE_TO_SINK = 0.5
"""K/W for a power package on a sink with thermal compound (common practice, from memory:
0.1-0.5 K/W greased metal-to-metal, about 1 K/W and more with a mica or silicone washer)."""

# Case-to-ambient thermal resistance of common power outlines standing in free air with no
# heat sink, K/W. Common practice, values from memory of makers' application notes; used only
# when a case-rated part has no heat sink given, and reported as assumed.
FREE_AIR_CASE_TO_AMBIENT: dict[str, float] = {
    "TO-3": 30.0,
    "TO-66": 45.0,
    "TO-220": 60.0,
    "TO-247": 40.0,
    "TO-218": 40.0,
    "TO-126": 90.0,
    "TO-202": 70.0,
    "TO-225": 90.0,
    "SOT-32": 90.0,
    "TO-5": 150.0,
    "TO-39": 150.0,
}
DEFAULT_FREE_AIR_CASE_TO_AMBIENT = 60.0

# Mounting (case-to-sink) resistance by outline class, K/W, insulated with a mica washer and
# grease (common practice; 0.3-0.6 K/W for a TO-3 with
# mica and grease, 0.5-1.5 K/W for TO-220 / TO-126 depending on washer and grease). The one
# table of these figures; an outline not listed takes the plastic-tab figure.
MOUNTING_CLASSES: dict[str, tuple[float, tuple[str, ...]]] = {
    "metal can power (TO-3, TO-66)": (0.5, ("TO-3", "TO-66", "TO-204", "TO-213")),
    "large plastic (TO-247, TO-218, TO-264)": (0.8, ("TO-247", "TO-218", "TO-264", "TO-3P")),
    "plastic tab (TO-220, TO-126, TO-202, TO-225, SOT-32)": (
        1.0, ("TO-220", "TO-126", "TO-202", "TO-225", "SOT-32")),
}
DEFAULT_MOUNTING = 1.0

SINK_SWEEP: tuple[float, ...] = (0.5, 1.0, 2.0, 5.0)
"""Sink-to-ambient K/W over which a substitute for a case-rated original is compared when the
original's heat sink is not given (common practice: a large finned sink about 0.5 K/W, a small
clip-on one about 5 K/W); the worst ratio decides."""


def _outline(package: str | None) -> str:
    return "".join(ch for ch in (package or "").upper() if ch not in " -._")


def mounting_resistance(package: str | None) -> float:
    """Case-to-sink K/W of an outline's class (:data:`MOUNTING_CLASSES`)."""
    key = _outline(package)
    for value, outlines in MOUNTING_CLASSES.values():
        if key in {_outline(o) for o in outlines}:
            return value
    return DEFAULT_MOUNTING


def heatsink_needed(tj_allowed: Any, ambient: Any, power: Any, rth_jc: Any,
                    case_to_sink: Any) -> Any:
    """Largest sink-to-ambient K/W that keeps the junction at ``tj_allowed`` while dissipating
    ``power``: Rth s-a <= (Tj allowed - Ta) / P - Rth j-c - Rth c-s (DOMAIN.md, heat sinks).
    0 or below: even an ideal sink is not enough."""
    with np.errstate(divide="ignore", invalid="ignore"):
        out = (np.asarray(tj_allowed, dtype=float) - np.asarray(ambient, dtype=float)) \
            / np.asarray(power, dtype=float) - np.asarray(rth_jc, dtype=float) \
            - np.asarray(case_to_sink, dtype=float)
    return out if np.ndim(out) else float(out)


def derated_power(ptot: Any, tj_max: Any, temperature: Any) -> Any:
    """Allowed dissipation at ``temperature`` (ambient or case, matching the rating)."""
    ptot = np.asarray(ptot, dtype=float)
    tj = np.asarray(tj_max, dtype=float)
    t = np.asarray(temperature, dtype=float)
    span = tj - T_RATING
    with np.errstate(divide="ignore", invalid="ignore"):
        # clip to 0..1 as two ufuncs (the same values, NaN kept; np.clip costs more per call)
        fraction = np.minimum(np.maximum((tj - t) / span, 0.0), 1.0)
    out = np.where(span > 0, ptot * fraction, np.nan)
    return out if out.ndim else float(out)


def rth_from_rating(ptot: Any, tj_max: Any) -> Any:
    """Junction-to-reference thermal resistance implied by a Ptot rating, K/W."""
    ptot = np.asarray(ptot, dtype=float)
    tj = np.asarray(tj_max, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = (tj - T_RATING) / ptot
    return out if out.ndim else float(out)


def junction_temperature(ambient: Any, power: Any, rth_total: Any) -> Any:
    """Tj = Ta + P x Rth(total)."""
    out = np.asarray(ambient, dtype=float) + np.asarray(power, dtype=float) * np.asarray(
        rth_total, dtype=float)
    return out if out.ndim else float(out)


def free_air_case_to_ambient(package: str | None) -> tuple[float, bool]:
    """Case-to-ambient Rth of a bare power package in free air, and whether it was a guess."""
    key = (package or "").upper().replace(" ", "")
    if key in FREE_AIR_CASE_TO_AMBIENT:
        return FREE_AIR_CASE_TO_AMBIENT[key], False
    return DEFAULT_FREE_AIR_CASE_TO_AMBIENT, True


def thermal_path(ptot: Any, tj_max: Any, ptot_ref: Any, heatsink: Any | None,
                 case_to_sink: Any = DEFAULT_CASE_TO_SINK,
                 free_air: Any = DEFAULT_FREE_AIR_CASE_TO_AMBIENT) -> Any:
    """Total junction-to-ambient Rth for the mounting described.

    * Free-air rating (``ptot_ref == "ambient"``): Rth j-a from the rating; a heat sink is not
      credited (the rating already assumes free air).
    * Case rating: Rth j-c from the rating plus case-to-sink plus sink-to-ambient; with no sink
      (``heatsink`` None or NaN), the package's free-air case-to-ambient ``free_air``.
    """
    rth = np.asarray(rth_from_rating(ptot, tj_max), dtype=float)
    is_case = np.asarray(ptot_ref) == "case"
    out = np.where(is_case, rth + case_to_ambient(heatsink, case_to_sink, free_air), rth)
    return out if out.ndim else float(out)


def case_to_ambient(heatsink: Any | None, case_to_sink: Any = DEFAULT_CASE_TO_SINK,
                    free_air: Any = DEFAULT_FREE_AIR_CASE_TO_AMBIENT) -> Any:
    """Rth from the case of a case-rated part to the ambient: case-to-sink plus the sink's
    sink-to-ambient, or with no sink (``heatsink`` None or NaN) the package's free-air figure."""
    sink = np.asarray(np.nan if heatsink is None else heatsink, dtype=float)
    out = np.where(np.isnan(sink) | np.isinf(sink), np.asarray(free_air, dtype=float),
                   np.asarray(case_to_sink, dtype=float) + sink)
    return out if out.ndim else float(out)


def allowed_power(ptot: Any, tj_max: Any, ptot_ref: Any, ambient: Any, rth_total: Any) -> Any:
    """Largest dissipation at ``ambient`` for the mounting whose total Rth is ``rth_total``.

    For a free-air rating this equals :func:`derated_power` at the ambient; for a case rating
    it is the power that brings the junction to Tj max through the whole chain.
    """
    out = np.where(np.asarray(ptot_ref) == "case", chain_power(ptot, tj_max, ambient, rth_total),
                   derated_power(ptot, tj_max, ambient))
    return out if np.ndim(out) else float(out)


def chain_power(ptot: Any, tj_max: Any, ambient: Any, rth_total: Any) -> Any:
    """Largest dissipation of a case-rated part at ``ambient`` through the whole chain of total
    Rth ``rth_total``: the power that brings the junction to Tj max, never above Ptot."""
    tj = np.asarray(tj_max, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        through_chain = np.maximum((tj - np.asarray(ambient, dtype=float)) / rth_total, 0.0)
    out = np.minimum(through_chain, np.asarray(ptot, dtype=float))
    return out if out.ndim else float(out)
