"""Designations: the one normalisation of part numbers, and the decoder of numbering schemes.

``normalize`` is used everywhere a designation is compared: the database key, search and
import. Two records that normalise the same are the same device.

``decode`` reads what an open numbering scheme says about a part from its name alone: Pro
Electron, JIS C 7012, JEDEC EIA-370 and the older European "O" names. It is pure (no database)
and never presents a guess as fact: anything that is inferred (a body marking without ``2S``, a
detail recalled from memory) is listed in ``inferred``; a name no scheme explains is ``unknown``.
"""

from __future__ import annotations

import re
import unicodedata
from dataclasses import asdict, dataclass, field
from typing import Any

from partsdb.limits import LimitError, char_name, text_problem

_FOLD = re.compile(r"[\s\-._/]+")


def normalize(designation: str) -> str:
    """Case-folded, with spaces, dashes, dots, underscores and slashes removed.

    "bc 547-b" -> "BC547B"; "2sc 1815" -> "2SC1815". Upper case because that is how parts are
    marked and listed (common practice). Unicode compatibility forms are folded first (NFKC,
    Unicode Standard Annex #15), so a fullwidth "ＢＣ５４７" is the same key as "BC547".
    """
    if not designation.isascii():
        designation = unicodedata.normalize("NFKC", designation)
    return _FOLD.sub("", designation).upper()


def clean_designation(designation: str) -> str:
    """The designation as it is stored: NFKC-folded, checked, surrounding space removed.

    Refused (:class:`LimitError`, naming the character by its Unicode name): control and format
    characters (NUL, line breaks, bidi overrides such as U+202E, zero-width characters), and
    every letter outside Latin, so a Cyrillic or Greek look-alike ("ВС547" with a Cyrillic VE)
    never becomes a second device beside the Latin one. Fullwidth forms fold to Latin through
    NFKC. Longer than the designation column (64 characters) is refused too.
    """
    text = unicodedata.normalize("NFKC", designation).strip() if not designation.isascii() \
        else designation.strip()
    problem = text_problem("designation", text)
    if problem is not None:
        raise LimitError(problem)
    if not text.isascii():
        odd = next(ch for ch in text if not ch.isascii())
        kind = ("a look-alike of a Latin letter" if odd.isalpha()
                else "not a Latin letter, digit or ASCII sign")
        raise LimitError(f"designation: {text[:40]!r} holds {char_name(odd)}, {kind}; "
                         "expected Latin letters, digits and signs such as - . /")
    return text


# --------------------------------------------------------------------------- letter tables
# Each table names its standard. Entries recalled without a primary source at hand say
# "from memory" in the comment beside them.

# Pro Electron, first letter: the semiconductor material, by band gap.
PRO_ELECTRON_MATERIAL: dict[str, tuple[str, str]] = {
    "A": ("ge", "germanium (band gap 0.6-1.0 eV)"),
    "B": ("si", "silicon (band gap 1.0-1.3 eV)"),
    "C": ("iii-v", "III-V compound such as gallium arsenide (band gap above 1.3 eV)"),
    "D": ("other", "material with a band gap below 0.6 eV (such as indium antimonide)"),
    "R": ("other", "compound material for junction-less devices (such as photoconductive cells "
                   "and Hall generators)"),
}


@dataclass(frozen=True)
class TypeLetter:
    """What a type letter of a numbering scheme says about the device."""

    family: str
    """transistor, bjt, fet, ujt, thyristor, triac, diode, optocoupler, sensor, other."""
    device_type: str
    """Plain words for people."""
    application: str | None = None
    """audio, rf, switching, high-frequency (JIS), or None when the letter says nothing."""
    power_class: str | None = None
    """small-signal or power, or None."""
    polarity: str | None = None
    from_memory: bool = False
    """True when this entry was recalled without the standard at hand."""


# Pro Electron, second letter: the device type. For transistors the power split is the thermal
# resistance junction to mounting base: small-signal Rth j-mb > 15 K/W, power <= 15 K/W.
# Pro Electron does not separate bipolar transistors from FETs (a JFET can be "BF...").
PRO_ELECTRON_TYPE: dict[str, TypeLetter] = {
    "A": TypeLetter("diode", "signal diode (low power)"),
    "B": TypeLetter("diode", "variable-capacitance diode (varicap)"),
    "C": TypeLetter("transistor", "transistor, audio-frequency small-signal", "audio",
                    "small-signal"),
    "D": TypeLetter("transistor", "transistor, audio-frequency power", "audio", "power"),
    "E": TypeLetter("diode", "tunnel diode"),
    "F": TypeLetter("transistor", "transistor, RF small-signal", "rf", "small-signal"),
    "G": TypeLetter("other", "hybrid or miscellaneous device"),
    "H": TypeLetter("sensor", "magnetic-field sensor (Hall or magnetic diode)"),
    # K and M are not in the brief's list; recalled from memory.
    "K": TypeLetter("sensor", "Hall generator in an open magnetic circuit", from_memory=True),
    "L": TypeLetter("transistor", "transistor, RF power", "rf", "power"),
    "M": TypeLetter("sensor", "Hall modulator or multiplier in a closed magnetic circuit",
                    from_memory=True),
    "N": TypeLetter("optocoupler", "optocoupler"),
    "P": TypeLetter("sensor", "radiation detector (photodiode, phototransistor)"),
    "Q": TypeLetter("other", "radiation generator / light emitter (such as an LED)"),
    "R": TypeLetter("thyristor", "thyristor or other control device, low power"),
    "S": TypeLetter("transistor", "transistor, switching small-signal", "switching",
                    "small-signal"),
    "T": TypeLetter("thyristor", "thyristor or triac, power"),
    "U": TypeLetter("transistor", "transistor, switching power", "switching", "power"),
    "W": TypeLetter("other", "surface acoustic wave (SAW) device"),
    "X": TypeLetter("diode", "multiplier diode (varactor, step recovery)"),
    "Y": TypeLetter("diode", "rectifier diode"),
    "Z": TypeLetter("diode", "voltage reference or regulator (zener) diode"),
}

# Pro Electron gain-group suffix on transistors: A low, B medium, C high hFE. The hFE limits of
# each group are the maker's; the scheme fixes only the order.
PRO_ELECTRON_GAIN_GROUP: dict[str, str] = {"A": "low hFE", "B": "medium hFE", "C": "high hFE"}

# Pro Electron zener suffix: tolerance letter of the working voltage (from memory), then the
# voltage with "V" as the decimal point ("C5V1": ±5 %, 5.1 V).
PRO_ELECTRON_ZENER_TOLERANCE: dict[str, str] = {"A": "±1 %", "B": "±2 %", "C": "±5 %",
                                                "D": "±10 %"}

# Transistor types in Pro Electron that are power types (Rth j-mb <= 15 K/W) and small-signal.
PRO_ELECTRON_TRANSISTOR_LETTERS = frozenset("CDFLSU")

# JIS C 7012, the leading digit: number of electrodes less one.
JIS_DIGIT: dict[str, str] = {
    "0": "photo device (photodiode, phototransistor)",  # from memory
    "1": "diode (two terminals)",
    "2": "transistor or other three-terminal device",
    "3": "four-terminal device (such as a dual-gate FET or a tetrode)",
}
JIS_DIGIT_FROM_MEMORY = frozenset("0")

# JIS C 7012, the letter after "S". A-D, F-H, J, K, M as the standard lists them; the diode
# letters are recalled from memory (marked).
JIS_TYPE: dict[str, TypeLetter] = {
    "A": TypeLetter("bjt", "PNP transistor, high-frequency", "high-frequency", None, "pnp"),
    "B": TypeLetter("bjt", "PNP transistor, audio-frequency (low-frequency)", "audio", None,
                    "pnp"),
    "C": TypeLetter("bjt", "NPN transistor, high-frequency", "high-frequency", None, "npn"),
    "D": TypeLetter("bjt", "NPN transistor, audio-frequency (low-frequency)", "audio", None,
                    "npn"),
    "F": TypeLetter("thyristor", "thyristor, P-gate"),
    "G": TypeLetter("thyristor", "thyristor, N-gate"),
    "H": TypeLetter("ujt", "unijunction transistor (N-base)"),
    # J and K give the channel (stored as the record's polarity "p" / "n"), not junction
    # versus MOS: both JFETs and MOSFETs are registered under them.
    "J": TypeLetter("fet", "P-channel FET (junction or MOS)", polarity="p"),
    "K": TypeLetter("fet", "N-channel FET (junction or MOS)", polarity="n"),
    "M": TypeLetter("triac", "triac"),
    "E": TypeLetter("diode", "tunnel (Esaki) diode", from_memory=True),
    "Q": TypeLetter("diode", "light-emitting diode", from_memory=True),
    "R": TypeLetter("diode", "rectifier diode", from_memory=True),
    "S": TypeLetter("diode", "small-signal (switching) diode", from_memory=True),
    "T": TypeLetter("diode", "avalanche diode", from_memory=True),
    "V": TypeLetter("diode", "variable-capacitance diode (varicap)", from_memory=True),
    "Z": TypeLetter("diode", "zener (voltage reference or regulator) diode", from_memory=True),
}
# Letters a body marking without "2S" may start with: the three-terminal types of JIS C 7012.
JIS_MARKING_LETTERS = frozenset("ABCDFGHJKM")
# JIS C 7012: registration numbers start at 11.
JIS_FIRST_SERIAL = 11

# JEDEC EIA-370, the digit before "N": number of junctions (or terminals less one).
JEDEC_PREFIX: dict[str, TypeLetter] = {
    "1": TypeLetter("diode", "diode"),
    "2": TypeLetter("three-terminal", "three-terminal device (transistor, FET or thyristor)"),
    "3": TypeLetter("four-terminal", "four-terminal device (such as a dual-gate MOSFET)"),
    "4": TypeLetter("optocoupler", "optocoupler"),
    "5": TypeLetter("optocoupler", "optocoupler"),
    "6": TypeLetter("optocoupler", "optocoupler", from_memory=True),
}
# Military qualification prefixes in front of a JEDEC number (MIL-PRF-19500; from memory).
JEDEC_MIL_PREFIXES: dict[str, str] = {
    "JANS": "JANS (space level)",
    "JANTXV": "JANTXV (extra testing, visual inspection)",
    "JANTX": "JANTX (extra testing)",
    "JAN": "JAN (qualified)",
}

# Older European scheme (before Pro Electron, about 1960): "O" is the valve-code heater letter
# for "no heater"; the letters after it follow the valve convention. Germanium parts of the
# 1950s. Entries marked from memory were recalled without a source at hand.
LEGACY_EUROPEAN_TYPE: dict[str, tuple[TypeLetter, str]] = {
    "A": (TypeLetter("diode", "diode"), "ge"),
    "AZ": (TypeLetter("diode", "zener diode"), "ge"),
    "AP": (TypeLetter("sensor", "photodiode", from_memory=True), "ge"),
    "C": (TypeLetter("transistor", "transistor"), "ge"),
    "CP": (TypeLetter("sensor", "phototransistor", from_memory=True), "ge"),
    "Y": (TypeLetter("diode", "rectifier"), "ge"),
    # ORP: cadmium-sulphide photoconductive cell, not germanium (from memory).
    "RP": (TypeLetter("sensor", "photoconductive cell", from_memory=True), "other"),
}

SCHEMES = ("pro-electron", "jis", "jedec", "legacy-european", "unknown")
STANDARD_NAMES: dict[str, str] = {
    "pro-electron": "Pro Electron",
    "jis": "JIS C 7012",
    "jedec": "JEDEC EIA-370",
    "legacy-european": "older European scheme (O prefix)",
    "unknown": "no known scheme",
}


@dataclass
class Decoded:
    """What a designation's numbering scheme says about the part (None: says nothing)."""

    designation: str
    normalized: str
    scheme: str = "unknown"
    """pro-electron, jis, jedec, legacy-european or unknown."""
    registered_as: str | None = None
    """The name in its scheme (``2SC1815`` for the marking ``C1815``)."""
    material: str | None = None
    """ge, si, iii-v, other or None."""
    material_text: str | None = None
    polarity: str | None = None
    """npn, pnp, the FET channel n or p, or None (most schemes do not encode it)."""
    family: str | None = None
    """transistor, bjt, fet, ujt, thyristor, triac, diode, optocoupler, sensor, other, ..."""
    device_type: str | None = None
    application: str | None = None
    power_class: str | None = None
    type_letter: str | None = None
    """The letter that carries the device type (Pro Electron 2nd letter, JIS letter)."""
    serial: str | None = None
    serial_class: str | None = None
    """Pro Electron: consumer (3 digits) or industrial (letter + 2 digits)."""
    gain_group: str | None = None
    suffix: str | None = None
    inferred: list[str] = field(default_factory=list)
    """Every inference and every detail recalled from memory, in words."""
    notes: list[str] = field(default_factory=list)
    """Facts of the scheme worth knowing (what it does not encode, what a suffix means)."""

    @property
    def standard(self) -> str:
        return STANDARD_NAMES[self.scheme]

    def to_json(self) -> dict[str, Any]:
        data = asdict(self)
        data["standard"] = self.standard
        return data


# --------------------------------------------------------------------------- decoders

_JEDEC = re.compile(r"^(JANTXV|JANTX|JANS|JAN)?([1-6])N(\d+)([A-Z]*)$")
_JIS = re.compile(r"^([0-3])S([A-Z]?)(\d+)([A-Z]*)$")
_JIS_MARKING = re.compile(r"^([A-Z])(\d{2,5})([A-Z]*)$")
_PRO_ELECTRON = re.compile(r"^([ABCDR])([A-Z])([A-Z]?)(\d+)([A-Z0-9]*)$")
_LEGACY = re.compile(r"^O([A-Z]{1,2})(\d+)([A-Z]?)$")
_NUMERIC_GROUP = re.compile(r"[-/ ](\d{2})\s*$")
_ZENER_SUFFIX = re.compile(r"^([A-Z]?)(\d+V\d*|\d+)$")


def _memory(out: Decoded, letter: TypeLetter, what: str) -> None:
    if letter.from_memory:
        out.inferred.append(f"{what} recalled from memory, not checked against the standard")


def _apply(out: Decoded, letter: TypeLetter) -> None:
    out.family = letter.family
    out.device_type = letter.device_type
    out.application = letter.application
    out.power_class = letter.power_class
    out.polarity = letter.polarity


def _decode_jedec(out: Decoded, m: re.Match[str]) -> None:
    mil, digit, serial, suffix = m.groups()
    letter = JEDEC_PREFIX[digit]
    out.scheme = "jedec"
    out.registered_as = out.normalized[len(mil):] if mil else out.normalized
    _apply(out, letter)
    out.type_letter = f"{digit}N"
    out.serial = serial
    out.suffix = suffix or None
    _memory(out, letter, f"the meaning of {digit}N")
    out.notes.append("a JEDEC number encodes neither polarity nor material, nor bipolar versus "
                     "FET")
    if suffix:
        out.notes.append(f"suffix {suffix}: a later variant of the registration (convention); it "
                         "implies no polarity or material either")
    if mil:
        out.notes.append(f"prefix {JEDEC_MIL_PREFIXES[mil]}: military qualification level")
        out.inferred.append("the meaning of the military prefix is recalled from memory "
                            "(MIL-PRF-19500)")


def _decode_jis(out: Decoded, digit: str, letter_code: str, serial: str, suffix: str) -> None:
    out.scheme = "jis"
    out.serial = serial
    out.suffix = suffix or None
    out.registered_as = f"{digit}S{letter_code}{serial}{suffix}"
    if digit in JIS_DIGIT_FROM_MEMORY:
        out.inferred.append(f"the meaning of the leading {digit} is recalled from memory")
    letter = JIS_TYPE.get(letter_code) if letter_code else None
    if letter is None:
        out.family = "diode" if digit == "1" else None
        out.device_type = JIS_DIGIT[digit]
        if letter_code:
            out.notes.append(f"letter {letter_code} is not a JIS C 7012 type letter this decoder "
                             "knows; only the terminal count is read")
    else:
        _apply(out, letter)
        out.type_letter = letter_code
        _memory(out, letter, f"JIS letter {letter_code}")
        if letter.family == "diode" and digit != "1":
            out.notes.append(f"letter {letter_code} is a diode letter but the leading digit is "
                             f"{digit}, not 1; check the marking")
        if letter.family == "fet" and digit == "3":
            # JIS C 7012: the leading digit is the electrode count less one, so 3SK / 3SJ is a
            # FET with four leads: in practice a dual-gate MOSFET (3SK; 3SJ from memory).
            out.device_type = (f"{letter.device_type.split(' (')[0]}, four-terminal (such as a "
                               "dual-gate MOSFET)")
            if letter_code == "J":
                out.inferred.append("3SJ (a four-terminal P-channel FET) is recalled from memory")
        if letter.family != "diode" and digit == "1":
            out.notes.append(f"letter {letter_code} is a three-terminal letter but the leading "
                             "digit is 1 (diode); check the marking")
    out.notes.append("JIS C 7012 names do not encode the material (silicon or germanium)")
    if int(serial) < JIS_FIRST_SERIAL:
        out.notes.append(f"serial {serial} is below {JIS_FIRST_SERIAL}, where JIS numbers start; "
                         "check the marking")
    if suffix:
        rank = "Idss" if out.family == "fet" else "hFE"  # FETs are ranked by Idss (common practice)
        out.notes.append(f"suffix {suffix}: an improved version or the maker's {rank} rank; which "
                         "one, and the rank limits, are the maker's")


def _decode_pro_electron(out: Decoded, m: re.Match[str]) -> bool:
    first, second, third, digits, rest = m.groups()
    letter = PRO_ELECTRON_TYPE.get(second)
    if letter is None:
        return False
    # Consumer types: two letters and three digits 100-999. Industrial types: three letters and
    # two digits ("BFQ32" = B, F, serial Q32).
    numeric_group: str | None = None
    if not third and len(digits) == 5:
        found = _NUMERIC_GROUP.search(out.designation)
        if found and digits.endswith(found.group(1)) and not rest:
            digits, numeric_group = digits[:3], found.group(1)
    if third:
        if len(digits) != 2:
            return False
        serial, serial_class = f"{third}{digits}", "industrial"
    else:
        if len(digits) != 3 or not 100 <= int(digits) <= 999:
            return False
        serial, serial_class = digits, "consumer"
    out.scheme = "pro-electron"
    out.registered_as = out.normalized
    out.material, out.material_text = PRO_ELECTRON_MATERIAL[first]
    _apply(out, letter)
    out.type_letter = second
    out.serial, out.serial_class = serial, serial_class
    _memory(out, letter, f"Pro Electron second letter {second}")
    if first == "D":
        out.notes.append("first letter D: band gap below 0.6 eV")
    if letter.family == "transistor":
        out.notes.append("Pro Electron names do not encode polarity (NPN or PNP), nor bipolar "
                         "versus FET")
    if letter.power_class == "power":
        out.notes.append("power type: thermal resistance junction to mounting base <= 15 K/W")
    elif letter.power_class == "small-signal":
        out.notes.append("small-signal type: thermal resistance junction to mounting base "
                         "> 15 K/W")
    if numeric_group:
        out.suffix = numeric_group
        out.notes.append(f"suffix -{numeric_group}: the maker's numeric hFE group (common "
                         "practice); not a Pro Electron gain-group letter")
        return True
    if not rest:
        return True
    out.suffix = rest
    if letter.power_class == "small-signal" and rest in PRO_ELECTRON_GAIN_GROUP:
        out.gain_group = rest
        out.notes.append(f"gain group {rest}: {PRO_ELECTRON_GAIN_GROUP[rest]} (the hFE limits "
                         "are the maker's)")
    elif second == "Z" and (z := _ZENER_SUFFIX.match(rest)):
        tol, volts = z.groups()
        if tol in PRO_ELECTRON_ZENER_TOLERANCE:
            out.notes.append(f"tolerance letter {tol}: {PRO_ELECTRON_ZENER_TOLERANCE[tol]}")
            out.inferred.append("the zener tolerance letters are recalled from memory")
        out.notes.append(f"working voltage {volts.replace('V', '.').rstrip('.')} V")
    elif letter.power_class == "power" and rest in PRO_ELECTRON_GAIN_GROUP:
        # BD241C, BDX53C: on power types makers use A/B/C for voltage grades (common practice).
        out.notes.append(f"suffix {rest} on a power type: often the maker's voltage grade rather "
                         "than a gain group (common practice); not read as a gain group")
    else:
        out.notes.append(f"suffix {rest}: a maker's variant, not decoded by Pro Electron")
    return True


def _decode_legacy(out: Decoded, m: re.Match[str]) -> bool:
    letters, serial, suffix = m.groups()
    entry = LEGACY_EUROPEAN_TYPE.get(letters)
    if entry is None:
        return False
    letter, material = entry
    out.scheme = "legacy-european"
    out.registered_as = out.normalized
    _apply(out, letter)
    out.type_letter = f"O{letters}"
    out.material = material
    out.material_text = ("germanium (implied: these names predate silicon parts, about 1960)"
                         if material == "ge" else "cadmium sulphide or other photoconductor")
    out.serial = serial
    out.suffix = suffix or None
    _memory(out, letter, f"the meaning of O{letters}")
    if material != "ge":
        out.inferred.append("ORP as a cadmium-sulphide cell is recalled from memory")
    out.notes.append("'O' is the valve-code heater letter for 'no heater'; polarity is not "
                     "encoded")
    return True


def decode(designation: str) -> Decoded:
    """Read what the designation's numbering scheme implies about the part.

    >>> decode("BC547B").material, decode("BC547B").gain_group
    ('si', 'B')
    >>> decode("C1815").registered_as
    '2SC1815'
    """
    out = Decoded(designation=designation, normalized=normalize(designation))
    key = out.normalized
    if (m := _JEDEC.match(key)) is not None:
        _decode_jedec(out, m)
        return out
    if (m := _JIS.match(key)) is not None:
        _decode_jis(out, *m.groups())
        return out
    if (m := _PRO_ELECTRON.match(key)) is not None and _decode_pro_electron(out, m):
        return out
    out = Decoded(designation=designation, normalized=key)  # discard a partial PE read
    if (m := _LEGACY.match(key)) is not None and _decode_legacy(out, m):
        return out
    m = _JIS_MARKING.match(key)
    if m is not None and m.group(1) in JIS_MARKING_LETTERS:
        letter_code, serial, suffix = m.groups()
        _decode_jis(out, "2", letter_code, serial, suffix)
        out.inferred.insert(0, f"read as JIS 2S{key}: body markings usually omit '2S', but this "
                               "is an inference; a maker's own number can look the same")
        return out
    if key:
        out.notes.append("no open numbering scheme explains this name (probably a maker's own "
                         "number); nothing is implied about the part")
    else:
        out.notes.append("empty designation")
    return out


decode_designation = decode
"""Alias under the project's verb-for-actions naming."""
