"""Preferred resistor values (IEC 60063 E6, E12, E24) and the nearest stocked value.

When a bias fix asks for 37.4 kΩ, the bench fits what the drawer holds: the nearest preferred
value. The tables are IEC 60063 as published, not 10^(i/n) rounded: eight E24 values (2.7, 3.0,
3.3, 3.6, 3.9, 4.3, 4.7, 8.2) differ from the formula, and so do the E6/E12 values taken from
them. "Nearest" is measured on a log scale (a ratio, like the tolerance bands), across decades.
"""

from __future__ import annotations

import math

# IEC 60063:2015, table 1 (E6, ±20 %), E12 (±10 %) and E24 (±5 %) mantissas of one decade.
E6: tuple[float, ...] = (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)
E12: tuple[float, ...] = (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)
E24: tuple[float, ...] = (1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
                          3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1)

SERIES: dict[str, tuple[float, ...]] = {"E6": E6, "E12": E12, "E24": E24}

Series = str | int | tuple[float, ...]


def series_values(series: Series) -> tuple[float, ...]:
    """The decade mantissas of ``series``: "E12", "e12", 12 or a tuple of mantissas."""
    if isinstance(series, tuple):
        if not series or any(not 1.0 <= m < 10.0 for m in series):
            raise ValueError(f"series: {series!r} is not valid; expected mantissas in [1, 10)")
        return tuple(sorted(series))
    key = f"E{series}" if isinstance(series, int) else str(series).strip().upper()
    if key not in SERIES:
        raise ValueError(f"series: {series!r} is not valid; expected one of {', '.join(SERIES)}")
    return SERIES[key]


def _scaled(mantissa: float, decade: int) -> float:
    # Build the value from its decimal text so 4.7 x 10^3 is exactly 4700.0, not 4700.000000001.
    return float(f"{mantissa!r}e{decade}")


def _candidates(value: float, series: Series) -> list[float]:
    if not (isinstance(value, int | float) and math.isfinite(value) and value > 0):
        raise ValueError(f"value: {value!r} is not valid; expected a positive finite number")
    mantissas = series_values(series)
    decade = math.floor(math.log10(value))
    # The decade below and above as well, so rounding at a decade edge (9.6 -> 10) is covered.
    return [_scaled(m, d) for d in (decade - 1, decade, decade + 1) for m in mantissas]


def nearest(value: float, series: Series) -> float:
    """The preferred value closest to ``value`` on a log scale (ties go to the lower value)."""
    target = math.log(value) if value > 0 else 0.0
    return min(_candidates(value, series), key=lambda c: (abs(math.log(c) - target), c))


def neighbours(value: float, series: Series) -> tuple[float, float]:
    """The preferred values on either side: (largest <= value, smallest >= value).

    A value that is itself preferred is returned on both sides.
    """
    cands = _candidates(value, series)
    below = max(c for c in cands if c <= value * (1 + 1e-12))
    above = min(c for c in cands if c >= value * (1 - 1e-12))
    return below, above
