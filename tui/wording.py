"""Messages in the user's words: a device field's or a stress's code key (``ic_max``,
``vce_peak``) written by the services becomes its engineering label (Ic max, Vce peak) before
the UI shows it. The labels come from the one table of each (partsdb.device.FIELDS,
partsdb.spec_fields.STRESS_FIELDS)."""

from __future__ import annotations

import re

from partsdb.device import FIELDS
from partsdb.spec_fields import STRESS_FIELDS

WORDS = {"designation", "kind", "polarity", "material", "package", "pinout", "application",
         "obsolete", "notes", "power", "ambient", "freq", "heatsink"}
"""Keys that are ordinary words: left alone in prose ("the package is ...")."""
LABELS: dict[str, str] = {
    **{f.name: f.label for f in FIELDS if f.name not in WORDS and f.label != f.name},
    **{row.name: row.label for row in STRESS_FIELDS if row.name not in WORDS},
}
"""Code key -> label (``ic_max`` -> Ic max, ``vceo`` -> Vceo)."""
_KEY = re.compile(r"(?<![-\w])(" + "|".join(sorted(map(re.escape, LABELS), key=len, reverse=True))
                  + r")(?![-\w])")


def in_labels(text: str) -> str:
    """``text`` with every field key named by its label: "ic_max: '1x' is not valid" ->
    "Ic max: '1x' is not valid"."""
    return _KEY.sub(lambda m: LABELS[m.group(1)], text)
