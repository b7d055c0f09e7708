"""Safety cautions shown wherever substitution or circuit results are shown (CLI, reports, UI)."""

from __future__ import annotations

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
