"""Safety cautions shown wherever substitution or circuit results are shown (CLI, reports, UI)."""

from __future__ import annotations

from collections.abc import Iterable

from partsdb.device import FET_KINDS

SAFETY_CAUTIONS: tuple[str, ...] = (
    "Mains-powered and high-voltage equipment can kill: vintage sets may have a live chassis, and "
    "capacitors hold a charge after switch-off. Work on it only if you are qualified to, and follow "
    "your local electrical codes.",
    "A part that meets every rating can still behave differently: a much faster part may oscillate, "
    "and a part without the original's heat sinking may run away thermally. Verify in circuit.",
    "In safety-critical equipment (medical, protection, life support, vehicles) substitutions are a "
    "matter for qualified, licensed practice and the maker's documentation, not for this tool.",
)

SHORT_CAUTION = (
    "Caution: mains and high-voltage equipment can kill. Verify every substitution in circuit; "
    "follow local codes and qualified practice."
)

FET_CAUTIONS: tuple[str, ...] = (
    "MOSFET gates are destroyed by static discharge, often without a visible sign: keep the parts "
    "in their conductive foam or bag until fitted, and work grounded (wrist strap, grounded iron "
    "and mat).",
    "Switch-mode supplies, where most power MOSFETs sit, carry lethal voltages on the primary side, "
    "and the input capacitors stay charged long after unplugging: discharge them through a "
    "resistor and measure before touching.",
)
"""Shown wherever a FET is involved (common practice of the trade; IEC 61340-5-1 is the standard
for protecting electronic devices from electrostatic discharge)."""

def cautions_for(kinds: Iterable[str | None]) -> tuple[str, ...]:
    """The general cautions, and the FET cautions after them when any of ``kinds`` is a FET."""
    if any(kind in FET_KINDS for kind in kinds):
        return (*SAFETY_CAUTIONS, *FET_CAUTIONS)
    return SAFETY_CAUTIONS
