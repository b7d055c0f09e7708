"""Consistency flags: where a device record contradicts what its designation implies.

A record typed from a worn datasheet can say "germanium" for a BC-type or "NPN" for a 2SA-type.
``consistency_warnings`` compares the record with :func:`partsdb.designations.decode` and returns
plain sentences naming both sides. It never changes the record: a warning is stored with it and
shown, because the name can be the thing that is wrong (a relabelled or house-numbered part).

Only what a scheme states is a hard fact (material letter, JIS polarity letter). Power and
frequency checks are heuristics derived below, and their sentences say "common practice".
"""

from __future__ import annotations

from partsdb.columns import plausibility_warnings
from partsdb.designations import Decoded, decode
from partsdb.device import FET_KINDS, POLARITY_WORDS, Device
from partsdb.units import format_quantity

CHECKED_FIELDS: tuple[str, ...] = ("designation", "kind", "polarity", "material", "ptot", "ptot_ref",
                                   "tj_max", "ft", "package", "ic_max", "pinout")
"""The only Device fields :func:`consistency_warnings` reads (the importer sets just these on one
reused record; a test holds the checker to this list)."""

_MATERIAL_WORDS: dict[str, str] = {"si": "silicon", "ge": "germanium", "other": "other material",
                                   "iii-v": "a III-V compound"}
# Device.material has no III-V choice; such parts are entered as "other".
_EXPECTED_RECORD_MATERIAL: dict[str, str] = {"si": "si", "ge": "ge", "iii-v": "other",
                                             "other": "other"}

# Pro Electron splits power from small-signal transistors at Rth j-mb = 15 K/W (junction to
# mounting base). With the linear derating law Ptot(25 °C case) = (Tj max - 25) / Rth j-mb
# (see partsdb.thermal), the split in case-rated Ptot is (Tj max - 25) / 15 K/W: 8.3 W for a
# silicon part at Tj max 150 °C, 4.3 W for germanium at 90 °C.
PRO_ELECTRON_RTH_SPLIT = 15.0  # K/W

# Datasheets round Ptot; a record within this factor of the split is not flagged.
ROUNDING_MARGIN = 1.1

# A free-air Ptot says nothing exact about Rth j-mb (Rth j-a = Rth j-mb + case-to-air), so a
# power type rated in free air is only flagged when it is implausibly small for any power
# package. Common practice: TO-126, TO-220 and TO-3 parts are rated above 1 W in free air; 0.5 W
# leaves margin for the smallest power packages.
FREE_AIR_POWER_FLOOR = 0.5  # W

# Frequency heuristics (common practice, not from the standards): JIS "high-frequency" types
# (2SA, 2SC) have fT from a few MHz up; audio germanium types sit near 1 MHz and below. Pro
# Electron RF types (F, L) have fT of tens of MHz or more. The floors are set low so that only a
# clear entry error (a unit slip such as kHz for MHz) is flagged.
JIS_HIGH_FREQUENCY_FT_FLOOR = 1e6  # Hz
PRO_ELECTRON_RF_FT_FLOOR = 10e6  # Hz

_TRANSISTOR_FAMILIES = frozenset({"transistor", "bjt", "three-terminal", "four-terminal"})


def _label(d: Decoded) -> str:
    """How the warning names the designation's claim, e.g. "JIS 2SA" or "Pro Electron B"."""
    if d.scheme == "jis":
        if not d.type_letter:
            return "JIS"
        digit = (d.registered_as or "2")[0]
        return f"JIS {digit}S{d.type_letter}"
    if d.scheme == "jedec":
        return f"JEDEC {d.type_letter}"
    if d.scheme == "legacy-european":
        return f"older European {d.type_letter}"
    return f"Pro Electron {d.normalized[:2]}"


def _material(device: Device, d: Decoded) -> list[str]:
    if d.material is None:
        return []
    expected = _EXPECTED_RECORD_MATERIAL[d.material]
    if device.material == expected:
        return []
    entered = _MATERIAL_WORDS.get(device.material, device.material)
    if d.scheme == "pro-electron":
        first = d.normalized[0]
        return [f"designated Pro Electron {first} ({_MATERIAL_WORDS[d.material]}) but entered "
                f"as {entered}"]
    return [f"designated in the {d.standard} as {d.type_letter} ({_MATERIAL_WORDS[d.material]}, "
            f"implied by the era) but entered as {entered}"]


def _polarity(device: Device, d: Decoded) -> list[str]:
    if d.polarity is None or device.polarity == d.polarity or _kind_clash(device, d):
        return []
    inferred = " (read from a marking without 2S)" if d.registered_as != d.normalized else ""
    return [f"{_label(d)} is {POLARITY_WORDS.get(d.polarity, d.polarity)}{inferred} but entered "
            f"{POLARITY_WORDS.get(device.polarity, device.polarity)}"]


def _kind_clash(device: Device, d: Decoded) -> bool:
    """The name says FET and the record bipolar, or the other way round (JIS 2SA-2SD vs 2SJ/2SK);
    Pro Electron and JEDEC names say neither, so they never clash."""
    fet = device.kind in FET_KINDS
    return (d.family == "fet" and not fet) or (d.family == "bjt" and fet)


def _family(device: Device, d: Decoded) -> list[str]:
    if d.family is None or (d.family in _TRANSISTOR_FAMILIES and d.family != "bjt"):
        return []
    if d.family == "fet" and device.kind in FET_KINDS:
        return _leads(device, d)
    if d.family == "bjt" and device.kind not in FET_KINDS:
        return []
    what = {"mosfet": "MOSFET", "jfet": "JFET"}.get(device.kind, f"{device.kind} transistor")
    return [f"designated {_label(d)}, meaning {d.device_type}, but entered as a {what}"]


def _leads(device: Device, d: Decoded) -> list[str]:
    """A JIS 3S- FET has four electrodes (JIS C 7012: the digit is the electrode count less
    one); a pinout of three leads contradicts it, and four leads on a 2S- FET likewise."""
    if not device.pinout or d.registered_as is None:
        return []
    leads = 4 if d.registered_as.startswith("3") else 3
    if len(device.pinout) == leads:
        return []
    return [f"{_label(d)} has {leads} leads (JIS C 7012: the leading digit is the electrode "
            f"count less one) but the pinout {device.pinout} has {len(device.pinout)}"]


def _power(device: Device, d: Decoded) -> list[str]:
    if d.scheme != "pro-electron" or d.power_class is None or device.ptot is None:
        return []
    tj, assumed = device.tj_max_or_default()
    if tj <= 25:
        return []
    split = (tj - 25.0) / PRO_ELECTRON_RTH_SPLIT
    # The tests come first and the sentences are built only for a contradiction: formatting a
    # quantity is far slower than the comparison, and most records of a catalog agree.
    if d.power_class == "small-signal":
        # Rth j-a >= Rth j-mb, so a free-air rating above the split is above it at the case too.
        if device.ptot > split * ROUNDING_MARGIN:
            return [f"second letter {d.type_letter} means {_meaning(d)} (Rth j-mb > 15 K/W, so "
                    f"Ptot below about {format_quantity(split, 'W')} at {_tj_text(tj, assumed)})"
                    f" but Ptot is {_ptot_text(device)}"]
        return []
    if device.ptot_ref == "case":
        if device.ptot * ROUNDING_MARGIN < split:
            return [f"second letter {d.type_letter} means {_meaning(d)} (Rth j-mb <= 15 K/W, so "
                    f"case-rated Ptot of at least about {format_quantity(split, 'W')} at "
                    f"{_tj_text(tj, assumed)}) but Ptot is {_ptot_text(device)}"]
        return []
    if device.ptot < FREE_AIR_POWER_FLOOR:
        return [f"second letter {d.type_letter} means {_meaning(d)} but Ptot is "
                f"{_ptot_text(device)}; power packages are rated above "
                f"{format_quantity(FREE_AIR_POWER_FLOOR, 'W')} even in free air (common practice)"]
    return []


def _meaning(d: Decoded) -> str:
    return d.device_type.removeprefix("transistor, ") if d.device_type else str(d.power_class)


def _tj_text(tj: float, assumed: bool) -> str:
    return f"Tj max {tj:g} °C" + (" assumed" if assumed else "")


def _ptot_text(device: Device) -> str:
    """Ptot for a warning, with how it is rated ("1.2 W (case-rated)")."""
    rated = {"case": " (case-rated)", "ambient": " (free air)"}.get(device.ptot_ref or "", "")
    return f"{format_quantity(device.ptot, 'W')}{rated}"


def _frequency(device: Device, d: Decoded) -> list[str]:
    if device.ft is None:
        return []
    if d.scheme == "jis" and d.application == "high-frequency" \
            and device.ft < JIS_HIGH_FREQUENCY_FT_FLOOR:
        return [f"{_label(d)} means high-frequency but fT is {format_quantity(device.ft, 'Hz')} "
                "(common practice: such types have fT above "
                f"{format_quantity(JIS_HIGH_FREQUENCY_FT_FLOOR, 'Hz')}); check the unit"]
    if d.scheme == "pro-electron" and d.application == "rf" \
            and device.ft < PRO_ELECTRON_RF_FT_FLOOR:
        return [f"second letter {d.type_letter} means RF but fT is "
                f"{format_quantity(device.ft, 'Hz')} (common practice: RF types have fT above "
                f"{format_quantity(PRO_ELECTRON_RF_FT_FLOOR, 'Hz')}); check the unit"]
    return []


def consistency_warnings(device: Device) -> list[str]:
    """Plain sentences where ``device`` contradicts its designation or its outline (values a
    small-signal outline cannot plausibly carry, :func:`partsdb.columns.plausibility_warnings`);
    empty when it agrees."""
    found = plausibility_warnings(device.package, device.ptot_ref, device.ic_max, device.ptot) \
        if device.package else []
    d = decode(device.designation)
    if d.scheme == "unknown":
        return found
    return [*_family(device, d), *_material(device, d), *_polarity(device, d),
            *_power(device, d), *_frequency(device, d), *found]
