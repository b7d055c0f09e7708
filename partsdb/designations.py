"""Designations: the one normalisation of part numbers, and the decoder of numbering schemes.

``normalize`` is used everywhere a designation is compared: the database key, search and
import. Two records that normalise the same are the same device.
"""

from __future__ import annotations

import re

_FOLD = re.compile(r"[\s\-._/]+")


def normalize(designation: str) -> str:
    """Case-folded, with spaces, dashes, dots, underscores and slashes removed.

    "bc 547-b" -> "BC547B"; "2sc 1815" -> "2SC1815". Upper case because that is how parts are
    marked and listed (common practice).
    """
    return _FOLD.sub("", designation).upper()
