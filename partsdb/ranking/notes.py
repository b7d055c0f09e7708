"""The prose of a ranking: check notes and flag messages, with their number formatting.

Every sentence a technician reads about a candidate is written here, from plain values; the
engine (:mod:`partsdb.ranking.engine`) decides which are written.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from partsdb.derating import Policy
from partsdb.ranking.model import (
    FT_FAST_FACTOR,
    HFE_HIGH_FACTOR,
    HFE_LOW_FACTOR,
    LABEL,
    UNIT,
    Requirement,
    Stress,
    outline_key,
)
from partsdb.thermal import DEFAULT_CASE_TO_SINK, FREE_AIR_CASE_TO_AMBIENT

_SI_STEPS: tuple[tuple[float, str], ...] = (
    (1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "µ"), (1e-9, "n"),
    (1e-12, "p"))


_SI_THRESHOLDS: tuple[tuple[float, str, float], ...] = tuple(
    (scale, prefix, scale * 0.9995) for scale, prefix in _SI_STEPS[:-1])
"""(scale, prefix, smallest magnitude shown with it): 999.5 rounds up to the next prefix."""


def fmt(value: float | None, unit: str) -> str:
    """Engineering notation with an SI prefix ("150 mW", "2 MHz"), 3 significant digits.

    Written out here because the details of every returned row are formatted on each ranking
    and the general formatter (quantiphy) costs about 0.1 ms a call.
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "—"
    if unit in ("", "°C", "K/W"):
        return f"{value:.3g} {unit}".strip()
    magnitude = abs(value)
    for scale, prefix, threshold in _SI_THRESHOLDS:
        if magnitude >= threshold:
            return f"{value / scale:.3g} {prefix}{unit}"
    return f"{value / 1e-12:.3g} p{unit}"  # the smallest step takes the rest (NaN is above)


def pct(x: float) -> str:
    return f"{100 * x:.0f} %"


def lead_mapping(original: str, substitute: str) -> str:
    """Which substitute lead goes to which board pad when the lead orders differ.

    The board's pads 1 2 3 carry the original's leads in order; each pad takes the substitute
    lead with the same function.
    """
    parts = []
    for pad, function in enumerate(original, start=1):
        lead = substitute.index(function) + 1
        parts.append(f"pad {pad} ({function}) gets lead {lead}")
    return (f"re-form leads: original {' '.join(original)} -> pads 1 2 3; substitute leads 1 2 3 "
            f"are {' '.join(substitute)}, so " + ", ".join(parts))


def fit_note(name: str, need: str | None, offered: str | None, status: str) -> str:
    if need is None:
        return "no requirement given"
    if offered is None:
        return f"not in the record (need {need})"
    if status == "ok":
        return f"same ({offered})"
    if name == "package":
        return (f"other outline: {offered} for {need}; mechanical and thermal adaptation "
                "(mounting, heat sink, lead spacing)")
    if name == "pinout":
        return lead_mapping(need, offered)
    if {need, offered} == {"ge", "si"}:
        return (f"material {need} -> {offered}: Vbe about "
                + ("0.6-0.7 V instead of 0.2-0.3 V" if offered == "si" else
                   "0.2-0.3 V instead of 0.6-0.7 V")
                + "; re-check the bias (partsdb bias)")
    return f"material {need} -> {offered}: re-check the bias (partsdb bias)"


_POLICY_FACTOR = {"vceo": "voltage", "vcbo": "voltage", "ic_max": "current", "ptot": "power"}
_STRESS_NAME = {"vceo": "Vce peak", "vcbo": "Vce peak", "ic_max": "Ic peak", "ptot": "dissipation"}


def rating_note(name: str, basis: str, need: float | None, offered: float | None,
                 req: Requirement, stress: Stress, policy: Policy, dev: dict[str, Any]) -> str:
    unit = UNIT[name]
    if need is None:
        return "no requirement (the original's value is unknown and no stress given)"
    if offered is None:
        return f"not in the record (need {fmt(need, unit)})"
    if name == "tj_max" and basis == "stress":
        limit = float(policy.tj_limit(offered))
        return (f"Tj estimated {need:.0f} °C at {fmt(stress.power, 'W')} and "
                f"{stress.ambient:g} °C ambient; {policy.name} allows {limit:.0f} °C, "
                f"Tj max {offered:.0f} °C")
    if name == "tj_max":
        return f"Tj max {offered:.0f} °C against the original's {need:.0f} °C"
    if name == "hfe":
        win = (f"{req.hfe_min:g}..{req.hfe_max:g}" if req.hfe_max is not None
               else f"{req.hfe_min:g}")
        cand = (f"{dev['hfe_min']:g}..{dev['hfe_max']:g}" if dev["hfe_max"] is not None
                else f"{dev['hfe_min']:g}")
        text = f"window {cand} against {win} (log scale)"
        code = gain_code(req, dev)
        if code == "high-gain":
            need_hi = req.hfe_max if req.hfe_max is not None else req.hfe_min
            text += (f"; much higher gain (hFE min {dev['hfe_min']:g} vs {need_hi:g}): risk of "
                     "instability or oscillation; check the stage (common practice)")
        elif code == "low-gain":
            text += f"; hFE min {dev['hfe_min']:g} is well below the needed {req.hfe_min:g}"
        return text
    if name == "ft":
        if basis == "gain-bandwidth":
            return (f"fT {fmt(offered, 'Hz')} against hFE min x f = {req.hfe_min:g} x "
                    f"{fmt(stress.freq, 'Hz')} = {fmt(need, 'Hz')} (gain-bandwidth, "
                    "textbook: gain falls as fT/f above f_beta)")
        return (f"fT {fmt(offered, 'Hz')} against the original's {fmt(need, 'Hz')}"
                + (" (no hFE min known, so --freq was not used)"
                   if stress.freq is not None else ""))
    if basis == "stress":
        factor = getattr(policy, _POLICY_FACTOR[name])
        what = _STRESS_NAME[name]
        rating = "allowed power" if name == "ptot" else LABEL[name]
        return (f"{what} {fmt(need, unit)} is {pct(need / offered)} of {rating} "
                f"{fmt(offered, unit)}; {policy.name} allows {pct(factor)}")
    if name == "ptot":
        return (f"allowed power at {stress.ambient:g} °C {fmt(offered, 'W')} against the "
                f"original's {fmt(need, 'W')} in the same mounting")
    return f"{LABEL[name]} {fmt(offered, unit)} against the original's {fmt(need, unit)}"


_TABLED_OUTLINES = frozenset(outline_key(k) for k in FREE_AIR_CASE_TO_AMBIENT)
"""Outlines with a free-air case-to-ambient figure in partsdb.thermal (others are assumed)."""


def below_original(name: str, offered: float, original: float) -> str:
    return (f"{LABEL[name]} {fmt(offered, UNIT[name])} is below the original's "
            f"{fmt(original, UNIT[name])} (fine for the stated stress only)")


def case_rating_message(dev: dict[str, Any], stress: Stress, free_air: float,
                         allowed: float) -> str:
    sink = (f"heat sink {stress.heatsink:g} K/W + {DEFAULT_CASE_TO_SINK:g} K/W case-to-sink"
            if stress.heatsink is not None else
            f"no heat sink: {free_air:g} K/W case-to-ambient in free air "
            f"for {dev['package'] or 'an unknown outline'}"
            + ("" if outline_key(dev["package"]) in _TABLED_OUTLINES else " (assumed)"))
    return (f"Ptot {fmt(dev['ptot'], 'W')} is a case rating; converted through the "
            f"thermal chain ({sink}) to {fmt(allowed, 'W')} at {stress.ambient:g} °C")


def much_faster(ft: float) -> str:
    return (f"fT {fmt(ft, 'Hz')} is over {FT_FAST_FACTOR:g}x the need: it may oscillate; keep "
            "leads short, add a base stopper if needed (common practice)")



def gain_code(req: Requirement, dev: Mapping[str, Any]) -> str:
    """``high-gain`` for a minimum above three times the needed maximum, ``low-gain`` for one
    below half the needed minimum (common practice), else "" (both make the hFE check
    marginal)."""
    if req.hfe_min is None or dev["hfe_min"] is None:
        return ""
    need_hi = req.hfe_max if req.hfe_max is not None else req.hfe_min
    if dev["hfe_min"] > HFE_HIGH_FACTOR * need_hi:
        return "high-gain"
    if dev["hfe_min"] * HFE_LOW_FACTOR < req.hfe_min:
        return "low-gain"
    return ""


def unknown_data_message(parameters: list[str]) -> str:
    return "no value to compare for " + ", ".join(parameters) + ": check the datasheet"
