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
    HFE_CURRENT_DECADES,
    HFE_HIGH_FACTOR,
    HFE_LOW_FACTOR,
    LABEL,
    UNIT,
    Requirement,
    Stress,
    outline_key,
)
from partsdb.thermal import FREE_AIR_CASE_TO_AMBIENT, SINK_SWEEP, mounting_resistance

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
                + "; re-check the bias (partsdb bias)"
                + ("; germanium circuits often reverse-bias the base-emitter junction past "
                   "a silicon part's Vebo (about 5 V): see the Vebo check"
                   if offered == "si" else ""))
    return f"material {need} -> {offered}: re-check the bias (partsdb bias)"


_POLICY_FACTOR = {"vceo": "voltage", "vcbo": "voltage", "vebo": "voltage", "ic_max": "current",
                  "ptot": "power"}
_STRESS_NAME = {"vceo": "Vce peak", "vcbo": "Vce peak", "vebo": "Veb peak", "ic_max": "Ic peak",
                "ptot": "dissipation"}


def rating_note(name: str, basis: str, need: float | None, offered: float | None,
                 req: Requirement, stress: Stress, policy: Policy, dev: dict[str, Any],
                 sink_needed: float | None = None, status: str = "") -> str:
    unit = UNIT[name]
    hot = name == "tj_max" and offered is not None and stress.ambient >= offered
    if hot:
        return (f"ambient {stress.ambient:g} °C is at or above Tj max {offered:.0f} °C: the part "
                "can dissipate nothing there")
    if name == "tj_max" and basis == "stress" and need is None and offered is not None \
            and dev.get("ptot_ref") == "case":
        return ("no Tj estimate: the heat sink is not known; judged with the sink the Ptot "
                "check names")
    if name == "ptot" and basis == "needed" and offered is not None:
        return _needed_note(offered, stress, policy, dev, sink_needed)
    if name == "ptot" and basis == "sweep" and need is not None and offered is not None:
        return (f"on the original's heat sink (assumed, not given: compared over "
                f"{', '.join(f'{x:g}' for x in SINK_SWEEP)} K/W sink-to-ambient with each "
                f"outline's mounting resistance; worst case shown): allows "
                f"{fmt(offered, 'W')} against the original's {fmt(need, 'W')} at "
                f"{stress.ambient:g} °C")
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
        if dev.get("hfe_ic") is not None and req.hfe_ic is not None:
            text += (f"; hFE measured at {fmt(dev['hfe_ic'], 'A')} against "
                     f"{fmt(req.hfe_ic, 'A')}")
            if stress.ic_peak is not None:
                text += f" (stage current {fmt(stress.ic_peak, 'A')})"
            if abs(math.log10(dev["hfe_ic"] / req.hfe_ic)) > HFE_CURRENT_DECADES:
                text += ": more than a decade apart, so the gains are not comparable (at best " \
                        "marginal; common practice)"
        if status == "under-rated":
            text += "; the window lies below the need: under-rated (common practice)"
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
        if basis == "gain-bandwidth-capped":
            return (f"fT {fmt(offered, 'Hz')} against the original's {fmt(need, 'Hz')} (hFE min "
                    f"x f = {req.hfe_min:g} x {fmt(stress.freq, 'Hz')} = "
                    f"{fmt((req.hfe_min or 0.0) * (stress.freq or 0.0), 'Hz')} is more than the original "
                    "offers, so the need is capped at the original's fT)")
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
        where = ("with no heat sink (free air)" if stress.free_air or stress.heatsink is None
                 else f"on a {stress.heatsink:g} K/W heat sink")
        return (f"allowed power at {stress.ambient:g} °C {fmt(offered, 'W')} against the "
                f"original's {fmt(need, 'W')}, {where}")
    return f"{LABEL[name]} {fmt(offered, unit)} against the original's {fmt(need, unit)}"


_TABLED_OUTLINES = frozenset(outline_key(k) for k in FREE_AIR_CASE_TO_AMBIENT)
"""Outlines with a free-air case-to-ambient figure in partsdb.thermal (others are assumed)."""


def below_original(name: str, offered: float, original: float) -> str:
    return (f"{LABEL[name]} {fmt(offered, UNIT[name])} is below the original's "
            f"{fmt(original, UNIT[name])} (fine for the stated stress only)")


def case_rating_message(dev: dict[str, Any], stress: Stress, free_air: float,
                         allowed: float, mode: str = "free-air",
                         sink_needed: float | None = None) -> str:
    mounting = mounting_resistance(dev["package"])
    if mode == "sweep":
        return (f"Ptot {fmt(dev['ptot'], 'W')} is a case rating; assumed on the original's heat "
                f"sink ({mounting:g} K/W case-to-sink for its outline class), worst case "
                f"{fmt(allowed, 'W')} at {stress.ambient:g} °C")
    if mode == "needed":
        need = ("no heat sink needed" if sink_needed is None else
                "no heat sink is enough" if sink_needed <= 0 else
                f"needs a heat sink of {sink_limit(sink_needed)} K/W or better")
        return (f"Ptot {fmt(dev['ptot'], 'W')} is a case rating and no heat sink was given: "
                f"{need} at {fmt(stress.power, 'W')} ({mounting:g} K/W case-to-sink for its "
                "outline class)")
    sink = (f"heat sink {stress.heatsink:g} K/W + {mounting:g} K/W case-to-sink"
            if mode == "given" and stress.heatsink is not None else
            f"no heat sink: {free_air:g} K/W case-to-ambient in free air "
            f"for {dev['package'] or 'an unknown outline'}"
            + ("" if outline_key(dev["package"]) in _TABLED_OUTLINES else " (assumed)"))
    return (f"Ptot {fmt(dev['ptot'], 'W')} is a case rating; converted through the "
            f"thermal chain ({sink}) to {fmt(allowed, 'W')} at {stress.ambient:g} °C")


def sink_limit(rth: float) -> str:
    """A largest allowed sink-to-ambient resistance, rounded DOWN to two significant digits
    (3.95 K/W reads 3.9, never 4: a sink of the rounded value must still keep Tj in limit)."""
    step = 10.0 ** (math.floor(math.log10(rth)) - 1)
    return f"{round(math.floor(rth / step + 1e-9) * step, 12):g}"


def much_faster(ft: float, of_original: bool = True) -> str:
    return (f"fT {fmt(ft, 'Hz')} is over {FT_FAST_FACTOR:g}x "
            + ("the original's" if of_original else "the need")
            + ": it may oscillate; keep leads short, add a base stopper if needed (common "
            "practice)")


def _needed_note(offered: float, stress: Stress, policy: Policy, dev: dict[str, Any],
                 sink: float | None) -> str:
    power = fmt(stress.power, "W")
    if dev.get("ptot_ref") != "case":
        factor = policy.power
        return (f"dissipation {power} is {pct((stress.power or 0.0) / offered)} of allowed "
                f"power {fmt(offered, 'W')} in free air; {policy.name} allows {pct(factor)}")
    if sink is None:
        return (f"dissipation {power}: no heat sink needed (the bare outline keeps Tj within "
                f"{policy.name}'s limit)")
    if sink <= 0:
        return (f"dissipation {power} is more than even an ideal heat sink allows at "
                f"{policy.name}'s Tj limit ({fmt(offered, 'W')})")
    return (f"dissipation {power}: needs a heat sink of {sink_limit(sink)} K/W or better "
            f"(sink-to-ambient, at {stress.ambient:g} °C, {policy.name}'s Tj limit; "
            "Rth s-a <= (Tj allowed - Ta)/P - Rth j-c - Rth c-s)")



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
