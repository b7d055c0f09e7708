"""Engineering notation in and out: the one place where text becomes a number with a unit.

Technicians type what they read off a datasheet: "40 V", "200mA", "300 MHz", "2k2", "4R7".
quantiphy is lax on input (it reads "2k2" as 2 with the unit "k2" and "4O0V" as 4 with the unit
"O0V"), so every text is checked here against a strict pattern: a number, an optional SI prefix,
an optional unit that must be the field's own; the prefix then scales the number (a test checks
every reading against quantiphy's). Output goes through quantiphy.

R-notation (IEC 60062 "RKM" code: the prefix letter stands where the decimal point goes, "R" or
"E" for the unit multiplier) is accepted for resistances, and the prefix-as-decimal-point form
("2k2", "4m7") for any unit.

Temperatures are kept in degrees Celsius, the unit of every datasheet and of the derating
formulas; every other quantity is kept in SI base units (V, A, W, Hz, ohm, K/W, C, F, S, s,
V/√Hz).
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from quantiphy import Quantity

from partsdb.errors import InvalidInput

if TYPE_CHECKING:
    import numpy as np

# SI prefixes (BIPM SI Brochure, 9th ed., table 7), plus "K" for kilo and "u" for micro,
# which are how workshops write them (common practice).
PREFIXES: dict[str, float] = {
    "T": 1e12,
    "G": 1e9,
    "M": 1e6,
    "k": 1e3,
    "K": 1e3,
    "": 1.0,
    "m": 1e-3,
    "u": 1e-6,
    "µ": 1e-6,
    "μ": 1e-6,
    "n": 1e-9,
    "p": 1e-12,
    "f": 1e-15,
}

# The units a field may carry, by canonical symbol, with the spellings accepted for each.
UNIT_SPELLINGS: dict[str, tuple[str, ...]] = {
    "V": ("v",),
    "A": ("a",),
    "W": ("w",),
    "Hz": ("hz",),
    "Ω": ("ω", "ohm", "ohms", "r"),
    "°C": ("°c", "c", "degc"),
    "K/W": ("k/w", "°c/w", "c/w"),
    "C": ("c",),
    "F": ("f",),
    "S": ("s", "mho"),
    "s": ("s", "sec"),
    "V/√Hz": ("v/√hz", "v/rthz", "v/rt(hz)", "v/sqrthz", "v/sqrt(hz)", "v/hz^0.5", "v/hz^½"),
    "": ("",),
}


class UnitError(InvalidInput):
    """A text that is not a valid quantity for its field; the message names field, value, unit."""

    def __init__(self, field: str, value: object, expected: str) -> None:
        self.field = field
        self.value = value
        self.expected = expected
        super().__init__(f"{field}: {value!r} is not valid; expected {expected}")


_NUMBER = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
_PREFIX = r"[TGMkKmuµμnpf]?"
# "40", "40V", "40 V", "200mA", "1.5e-3 A", "0.3 GHz"
_PLAIN = re.compile(rf"^(?P<num>{_NUMBER})\s*(?P<prefix>{_PREFIX})\s*(?P<unit>[^\d\s].*)?$")
# "2k2", "4m7", "1M5" (+ optional unit): prefix letter as decimal point
_RKM = re.compile(r"^(?P<int>\d+)(?P<prefix>[TGMkKmuµμnp])(?P<frac>\d+)\s*(?P<unit>[^\d\s].*)?$")
# "4R7", "R47", "47R", "4E7" : resistance only
_RKM_R = re.compile(r"^(?P<int>\d*)[RE](?P<frac>\d*)\s*(?P<unit>ohms?|Ω)?$", re.IGNORECASE)


def _unit_matches(text: str | None, unit: str) -> bool:
    if not text:
        return True
    return text.strip().lower() in UNIT_SPELLINGS.get(unit, (unit.lower(),))


def describe(unit: str) -> str:
    """Human wording of what a field expects, used in error messages."""
    if unit == "":
        return "a plain number"
    examples = {
        "V": "a voltage such as 40V or 1.2 kV",
        "A": "a current such as 200mA or 1.5 A",
        "W": "a power such as 625mW or 30 W",
        "Hz": "a frequency such as 300MHz",
        "Ω": "a resistance such as 2k2, 4R7 or 47 kΩ",
        "°C": "a temperature in °C such as 150",
        "K/W": "a thermal resistance such as 8 K/W",
        "C": "a charge such as 25nC",
        "F": "a capacitance such as 1.2nF or 8 pF",
        "S": "a transconductance such as 5mS or 12 S",
        "s": "a time such as 80ns",
        "V/√Hz": "a noise density such as 2 nV/√Hz or 4nV/rtHz",
    }
    return examples.get(unit, f"a number in {unit}")


def parse_quantity(text: object, unit: str, field: str = "value") -> float:
    """Parse ``text`` as a quantity in ``unit`` and return it in the base unit.

    Accepts numbers (taken in the base unit), engineering notation with an optional unit that
    must be the field's own, and RKM notation. Raises :class:`UnitError` naming the field.
    """
    if isinstance(text, bool):
        raise UnitError(field, text, describe(unit))
    if isinstance(text, int | float):
        value = float(text)
        if not math.isfinite(value):
            raise UnitError(field, text, describe(unit))
        return value
    if not isinstance(text, str):
        raise UnitError(field, text, describe(unit))
    s = text.strip()
    if not s:
        raise UnitError(field, text, describe(unit))

    m = _PLAIN.match(s)
    if m and m.group("prefix") and _unit_matches(m.group("prefix") + (m.group("unit") or ""), unit):
        # The "prefix" letter was the start of the unit itself ("8 K/W", "25 C").
        return float(m.group("num"))
    if m and _unit_matches(m.group("unit"), unit) and not (unit == "" and m.group("prefix")):
        value = float(m.group("num")) * PREFIXES[m.group("prefix")]
        if math.isfinite(value):
            return value

    m = _RKM.match(s)
    if m and unit != "" and _unit_matches(m.group("unit"), unit):
        return float(f"{m.group('int')}.{m.group('frac')}") * PREFIXES[m.group("prefix")]

    if unit == "Ω":
        m = _RKM_R.match(s)
        if m and (m.group("int") or m.group("frac")):
            return float(f"{m.group('int') or 0}.{m.group('frac') or 0}")

    raise UnitError(field, text, describe(unit))


# Cells made only of these characters are numbers exactly when Python's float() reads them, and
# then float() and parse_quantity read them alike (_NUMBER is the decimal float syntax).
_NUMBER_CHARS = "0123456789.+-eE"
_WITH_UNIT: dict[str, Any] = {}


def _with_unit_pattern(unit: str) -> Any:
    """"number [prefix] unit" for one unit's spellings (None for the bare number unit "")."""
    if unit not in _WITH_UNIT:
        spellings = [re.escape(u) for u in UNIT_SPELLINGS.get(unit, ()) if u]
        _WITH_UNIT[unit] = (re.compile(rf"^({_NUMBER})\s*({_PREFIX})\s*({'|'.join(spellings)})$",
                                       re.IGNORECASE) if spellings else None)
    return _WITH_UNIT[unit]


def parse_quantities(cells: Sequence[str], unit: str, field: str = "value",
                     bare_scale: float = 1.0) -> tuple[np.ndarray, dict[int, UnitError]]:
    """:func:`parse_quantity` over a column of text cells (already stripped), for imports.

    Returns the values in the base unit (NaN for a blank cell, "" or "—", and for a refused
    one) and the error of each refused cell by position. Reads every cell exactly as
    :func:`parse_quantity` does (a test holds it to that), faster: plain numbers go through
    numpy in one conversion, the common "40V" / "300 MHz" form through one compiled pattern,
    and only the rest (R-notation, prefix-as-decimal-point, junk) cell by cell.

    ``bare_scale`` multiplies the bare numbers only (a column whose header says "mA": 1e-3);
    a cell with its own unit is read by that unit.
    """
    import numpy as np

    n = len(cells)
    raw = np.empty(n, dtype=object)
    raw[:] = cells
    blank = (raw == "") | (raw == "—")
    plain = np.array([not cell.strip(_NUMBER_CHARS) for cell in cells], dtype=bool) & ~blank
    numbers = np.full(n, np.nan)
    if plain.any():
        try:
            numbers[plain] = raw[plain].astype(float)
        except ValueError:  # a stray "." or "1-2": read those one by one below
            numbers[plain] = [_float_or_nan(cell) for cell in raw[plain].tolist()]
        if bare_scale != 1.0:
            numbers[plain] *= bare_scale
    pending = ~blank & ~np.isfinite(numbers)  # "1e999" is refused, as parse_quantity does
    pattern = _with_unit_pattern(unit)
    if pattern is not None and pending.any():
        positions = np.flatnonzero(pending)
        done, values = [], []
        for pos, cell in zip(positions.tolist(), raw[positions].tolist(), strict=True):
            m = pattern.match(cell)
            # A case-insensitive match must not turn "m" (milli) into "M" (mega): the prefix is
            # taken exactly as written; a letter the case-folded match took for a prefix ("U",
            # "t") is left to parse_quantity.
            if m is not None and (factor := PREFIXES.get(m.group(2))) is not None \
                    and math.isfinite(value := float(m.group(1)) * factor):
                done.append(pos)
                values.append(value)
        if done:
            numbers[done] = values
            pending[done] = False
    errors: dict[int, UnitError] = {}
    for pos in np.flatnonzero(pending).tolist():
        try:
            numbers[pos] = parse_quantity(raw[pos], unit, field)
        except UnitError as err:
            numbers[pos] = np.nan
            errors[pos] = err
    return numbers, errors


def _float_or_nan(cell: str) -> float:
    try:
        return float(cell)
    except ValueError:
        return math.nan


def format_quantity(value: float | None, unit: str, digits: int = 3) -> str:
    """Format a base-unit value with an SI prefix: 0.2, "A" -> "200 mA". None -> "—"."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "—"
    if unit in ("°C", "K/W", ""):
        text = f"{value:.{digits}g}"
        return f"{text} {unit}".strip()
    with Quantity.prefs(map_sf=Quantity.map_sf_to_greek):
        return Quantity(value, unit).render(prec=digits - 1, strip_zeros=True)


@dataclass(frozen=True)
class Range:
    """A closed interval of a quantity such as an hFE window "60..180"."""

    low: float
    high: float


def parse_range(text: str, unit: str, field: str) -> Range:
    """Parse "60..180", "60-180" (when unambiguous) or a single value "100" as a range."""
    s = str(text).strip()
    parts = re.split(r"\s*\.\.\s*|\s*(?<=\d)\s*(?:to|…)\s*", s)
    if len(parts) == 1:
        v = parse_quantity(parts[0], unit, field)
        return Range(v, v)
    if len(parts) != 2:
        raise UnitError(field, text, "a range such as 60..180")
    low = parse_quantity(parts[0], unit, field)
    high = parse_quantity(parts[1], unit, field)
    if low > high:
        raise UnitError(field, text, f"a range whose low end is not above its high end ({s})")
    return Range(low, high)


ZERO_CELSIUS = 273.15
"""0 °C in kelvin (SI Brochure, 9th ed., 2.3.1: t/°C = T/K - 273.15)."""

# "45", "-20", "45C", "45 °C", "45°C", "45 degC", "45 ℃" (Celsius) and "318K", "318 K"
# (kelvin). Only here is "K" the kelvin; everywhere else it stays the kilo prefix.
_TEMPERATURE = re.compile(
    rf"^(?P<num>{_NUMBER})\s*(?:(?P<celsius>°\s*C|C|degC|deg\s*C|℃)|(?P<kelvin>K))?$",
    re.IGNORECASE)


def parse_temperature(text: object, field: str = "ambient") -> float:
    """An ambient or case temperature in °C from ``45``, ``45C``, ``45 °C`` or ``318K``.

    A bare number is degrees Celsius (the unit of every datasheet); a trailing ``K`` means
    kelvin and is converted (t/°C = T/K - 273.15). Raises :class:`UnitError` naming ``field``.
    """
    expected = "a temperature such as 45, 45 °C or 318 K"
    if isinstance(text, int | float) and not isinstance(text, bool):
        value = float(text)
        if not math.isfinite(value) or value <= -ZERO_CELSIUS:
            raise UnitError(field, text, expected + " (above absolute zero)")
        return value
    if not isinstance(text, str):
        raise UnitError(field, text, expected)
    m = _TEMPERATURE.match(text.strip())
    if m is None:
        raise UnitError(field, text, expected)
    value = float(m.group("num"))
    if m.group("kelvin"):
        if value < 0:
            raise UnitError(field, text, "a kelvin temperature of 0 K or more")
        value = round(value - ZERO_CELSIUS, 9)  # 318 K -> 44.85, not 44.850000000000023
    if not math.isfinite(value) or value <= -ZERO_CELSIUS:
        raise UnitError(field, text, expected + " (above absolute zero)")
    return value
