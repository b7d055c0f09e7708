"""Consistency flags: a record against what its designation implies.

Designations are invented but follow each scheme's shape. The oracle for each flag is the
scheme's letter meaning (standard named per case) and, for the power split, Pro Electron's
Rth j-mb = 15 K/W boundary turned into watts with the linear derating law
Ptot = (Tj max - 25 °C) / Rth (DOMAIN.md, thermal chain), computed by hand in the comments.
"""

from __future__ import annotations

import pytest

from partsdb import consistency
from partsdb.consistency import (
    CHECKED_FIELDS,
    FREE_AIR_POWER_FLOOR,
    JIS_HIGH_FREQUENCY_FT_FLOOR,
    PRO_ELECTRON_RF_FT_FLOOR,
    PRO_ELECTRON_RTH_SPLIT,
    ROUNDING_MARGIN,
    consistency_warnings,
)
from partsdb.designations import Decoded, decode
from partsdb.device import FIELD_NAMES, Device
from partsdb.units import format_quantity


def warnings_for(**fields: object) -> list[str]:
    return consistency_warnings(Device(**fields))  # type: ignore[arg-type]


@pytest.mark.parametrize("fields", [
    {"designation": "BC384B", "material": "si", "ptot": 0.5, "ptot_ref": "ambient"},
    {"designation": "AC384", "material": "ge", "tj_max": 90.0},
    {"designation": "2SA3377", "polarity": "pnp", "ft": 150e6},
    {"designation": "2SD3377", "polarity": "npn", "ft": 5e6},
    {"designation": "BD384", "ptot": 12.5, "ptot_ref": "case", "tj_max": 150.0},
    {"designation": "BD384", "ptot": 1.25, "ptot_ref": "ambient"},
    {"designation": "2N7781", "polarity": "pnp", "material": "ge"},  # JEDEC implies neither
    {"designation": "QX7781", "material": "ge", "ptot": 90.0, "ptot_ref": "case"},  # unknown
    {"designation": "OC83", "material": "ge", "polarity": "pnp"},
])
def test_consistent_records_have_no_warnings(fields: dict[str, object]) -> None:
    assert warnings_for(**fields) == []


@pytest.mark.parametrize(("designation", "material", "expected"), [
    # Pro Electron 1st letter B = silicon
    ("BC384", "ge", "designated Pro Electron B (silicon) but entered as germanium"),
    # Pro Electron 1st letter A = germanium
    ("AC384", "si", "designated Pro Electron A (germanium) but entered as silicon"),
    # Pro Electron 1st letter C = III-V; the record's choice for it is "other"
    ("CF384", "si", "designated Pro Electron C (a III-V compound) but entered as silicon"),
])
def test_material_contradiction(designation: str, material: str, expected: str) -> None:
    assert expected in warnings_for(designation=designation, material=material)


def test_legacy_o_name_entered_as_silicon() -> None:
    # Older European scheme: OC transistors are 1950s germanium parts.
    out = warnings_for(designation="OC83", material="si")
    assert len(out) == 1 and "germanium" in out[0] and "silicon" in out[0]


@pytest.mark.parametrize(("designation", "polarity", "expected"), [
    ("2SA3377", "npn", "JIS 2SA is PNP but entered NPN"),  # JIS C 7012: A = PNP
    ("2SB377", "npn", "JIS 2SB is PNP but entered NPN"),   # B = PNP
    ("2SC3377", "pnp", "JIS 2SC is NPN but entered PNP"),  # C = NPN
    ("2SD377", "pnp", "JIS 2SD is NPN but entered PNP"),   # D = NPN
])
def test_jis_polarity_contradiction(designation: str, polarity: str, expected: str) -> None:
    assert warnings_for(designation=designation, polarity=polarity) == [expected]


def test_polarity_from_marking_without_2s_says_it_is_read() -> None:
    out = warnings_for(designation="A3377", polarity="npn")
    assert out == ["JIS 2SA is PNP (read from a marking without 2S) but entered NPN"]


@pytest.mark.parametrize(("designation", "words"), [
    ("2SK377", "N-channel FET"),  # JIS C 7012: K = N-channel FET
    ("2SM377", "triac"),          # M = triac
    ("1N7781", "diode"),          # JEDEC EIA-370: 1N = diode
    ("BY384", "rectifier"),       # Pro Electron 2nd letter Y = rectifier
])
def test_not_a_transistor(designation: str, words: str) -> None:
    out = warnings_for(designation=designation)
    assert len(out) == 1 and words in out[0] and "entered as a bjt" in out[0]


# Pro Electron split at Rth j-mb = 15 K/W: Ptot(case) = (Tj max - 25) / 15.
# Tj max 150 °C: 125 / 15 = 8.33 W. Tj max 90 °C: 65 / 15 = 4.33 W. Flags allow 10 % rounding.
@pytest.mark.parametrize(("letter", "ptot", "ref", "tj", "flagged"), [
    ("C", 60.0, "case", 150.0, True),     # small-signal, 60 W >> 8.33 W
    ("F", 9.5, "case", 150.0, True),      # 9.5 W > 8.33 x 1.1 = 9.17 W
    ("S", 8.0, "case", 150.0, False),     # 8 W < 8.33 W
    ("C", 9.5, "ambient", 150.0, True),   # free air <= case rating, so also above the split
    ("C", 5.0, "case", 90.0, True),       # germanium-like Tj 90: 5 W > 4.33 x 1.1 = 4.77 W
    ("D", 7.0, "case", 150.0, True),      # power: 7 x 1.1 = 7.7 W < 8.33 W
    ("L", 8.0, "case", 150.0, False),     # 8 x 1.1 = 8.8 W >= 8.33 W
    ("U", 4.5, "case", 90.0, False),      # 4.5 W > 4.33 W
    ("D", 0.15, "ambient", 150.0, True),  # free air: below the 0.5 W floor (common practice)
    ("D", 0.15, None, 150.0, True),       # unknown reference: treated as free air
    ("U", 0.8, "ambient", 150.0, False),  # free air, above the floor: nothing to say
])
def test_pro_electron_power_split(letter: str, ptot: float, ref: str | None, tj: float,
                                  flagged: bool) -> None:
    out = warnings_for(designation=f"B{letter}384", ptot=ptot, ptot_ref=ref, tj_max=tj)
    assert bool(out) is flagged
    if flagged:
        assert out[0].startswith(f"second letter {letter} means ")
        assert "but Ptot is" in out[0]


def test_power_warning_names_both_sides() -> None:
    out = warnings_for(designation="BD384", ptot=0.15, ptot_ref="ambient")
    assert out[0].startswith("second letter D means audio-frequency power")
    assert "150 mW" in out[0]


def test_small_signal_warning_names_threshold_and_assumed_tj() -> None:
    out = warnings_for(designation="BC384", ptot=60.0, ptot_ref="case")
    # Tj max assumed 150 °C for silicon (project default): split 8.33 W.
    assert "60 W" in out[0] and "8.33 W" in out[0] and "assumed" in out[0]


@pytest.mark.parametrize(("designation", "ft", "flagged"), [
    ("2SC3377", 80e3, True),    # JIS C = high-frequency; 80 kHz is a unit slip (common practice)
    ("2SA3377", 500e3, True),
    ("2SC3377", 30e6, False),
    ("2SD3377", 80e3, False),   # D = audio: no floor
    ("BF384", 1e6, True),       # Pro Electron F = RF; 1 MHz is below the 10 MHz floor
    ("BF384", 60e6, False),
])
def test_frequency_heuristics(designation: str, ft: float, flagged: bool) -> None:
    polarity = "pnp" if designation.startswith("2SA") else "npn"  # JIS A = PNP, C/D = NPN
    out = warnings_for(designation=designation, ft=ft, polarity=polarity)
    assert bool(out) is flagged
    if flagged:
        assert "common practice" in out[0] and "fT is" in out[0]


# ---------------------------------------------------------------- the importer's fast path
# The sentences are now built only when a check fails, and the importer runs the checker on one
# reused record carrying CHECKED_FIELDS. These tests hold both to the behaviour before that
# change. The reference below is the previous implementation of the two functions that changed
# (its sentences were built before the tests); it is a regression oracle, not a domain source:
# the domain facts behind each sentence are checked by the tests above.

def _reference_power(device: Device, d: Decoded) -> list[str]:
    if d.scheme != "pro-electron" or d.power_class is None or device.ptot is None:
        return []
    tj, assumed = device.tj_max_or_default()
    if tj <= 25:
        return []
    split = (tj - 25.0) / PRO_ELECTRON_RTH_SPLIT
    tj_text = f"Tj max {tj:g} °C" + (" assumed" if assumed else "")
    ptot = format_quantity(device.ptot, "W")
    rated = {"case": " (case-rated)", "ambient": " (free air)"}.get(device.ptot_ref or "", "")
    meaning = d.device_type.removeprefix("transistor, ") if d.device_type else d.power_class
    if d.power_class == "small-signal":
        if device.ptot > split * ROUNDING_MARGIN:
            return [f"second letter {d.type_letter} means {meaning} (Rth j-mb > 15 K/W, so Ptot "
                    f"below about {format_quantity(split, 'W')} at {tj_text}) but Ptot is "
                    f"{ptot}{rated}"]
        return []
    if device.ptot_ref == "case":
        if device.ptot * ROUNDING_MARGIN < split:
            return [f"second letter {d.type_letter} means {meaning} (Rth j-mb <= 15 K/W, so "
                    f"case-rated Ptot of at least about {format_quantity(split, 'W')} at "
                    f"{tj_text}) but Ptot is {ptot}{rated}"]
        return []
    if device.ptot < FREE_AIR_POWER_FLOOR:
        return [f"second letter {d.type_letter} means {meaning} but Ptot is {ptot}{rated}; "
                f"power packages are rated above {format_quantity(FREE_AIR_POWER_FLOOR, 'W')} "
                "even in free air (common practice)"]
    return []


def _reference_frequency(device: Device, d: Decoded) -> list[str]:
    if device.ft is None:
        return []
    ft = format_quantity(device.ft, "Hz")
    if d.scheme == "jis" and d.application == "high-frequency" \
            and device.ft < JIS_HIGH_FREQUENCY_FT_FLOOR:
        return [f"{consistency._label(d)} means high-frequency but fT is {ft} (common practice: "
                f"such types have fT above {format_quantity(JIS_HIGH_FREQUENCY_FT_FLOOR, 'Hz')}); "
                "check the unit"]
    if d.scheme == "pro-electron" and d.application == "rf" \
            and device.ft < PRO_ELECTRON_RF_FT_FLOOR:
        return [f"second letter {d.type_letter} means RF but fT is {ft} (common practice: RF "
                f"types have fT above {format_quantity(PRO_ELECTRON_RF_FT_FLOOR, 'Hz')}); check "
                "the unit"]
    return []


def _reference_warnings(device: Device) -> list[str]:
    d = decode(device.designation)
    if d.scheme == "unknown":
        return []
    return [*consistency._family(device, d), *consistency._material(device, d),
            *consistency._polarity(device, d), *_reference_power(device, d),
            *_reference_frequency(device, d)]


def _many_devices() -> list[Device]:
    """Synthetic records (agreeing with their names), the same records under other rows' names
    (so most checks fire), variations of Tj max and Ptot reference, and the demo seed file."""
    import csv
    import random
    from pathlib import Path

    from partsdb.device import parse_device
    from partsdb.perf.synthetic import CLASSES, draw_catalog

    cat = draw_catalog(3000, seed=11)
    rng = random.Random(3)
    names = cat.designation.tolist()
    shuffled = names[:]
    rng.shuffle(shuffled)
    extra = ["BC384", "AD384", "BU384", "BF384", "CF384", "RL384", "BY384", "2SK377", "2SC3377",
             "C3377", "A3377", "1N7781", "OC83", "ORP83", "2N7781", "QX9", ""]
    out = []
    for i in range(len(cat)):
        cls = CLASSES[int(cat.cls[i])]
        nums = {k: (None if v != v else float(v)) for k, v in
                ((k, cat.numbers[k][i]) for k in ("ptot", "tj_max", "ft"))}
        for name in (names[i], shuffled[i], extra[i % len(extra)]):
            out.append(Device(designation=name, kind=cls.kind, polarity=str(cat.polarity[i]),
                              material=rng.choice([cls.material, "si", "ge", "other"]),
                              ptot=nums["ptot"], ptot_ref=rng.choice([cls.ptot_ref, None, "case"]),
                              tj_max=rng.choice([nums["tj_max"], None, 20.0, 25.0, 90.0]),
                              ft=nums["ft"] if i % 7 else rng.choice([None, 5e3, 0.5e6, 5e6])))
    seed = Path(__file__).resolve().parents[2] / "seed_data" / "devices.csv"
    with open(seed, encoding="utf-8") as fh:
        out.extend(parse_device({k: v for k, v in row.items() if v != ""})
                   for row in csv.DictReader(fh))
    return out


def test_lazy_sentences_match_the_previous_implementation() -> None:
    devices = _many_devices()
    flagged = 0
    for device in devices:
        expected = _reference_warnings(device)
        assert consistency_warnings(device) == expected, device
        flagged += bool(expected)
    # The sample must exercise the warning branches, not only the quiet ones.
    assert flagged > 2000
    kinds = {w.split(" ")[0] for dev in devices for w in consistency_warnings(dev)}
    assert {"second", "designated", "JIS"} <= kinds


class _Watched(Device):
    """A Device that records which of its attributes are read."""

    def __getattribute__(self, name: str) -> object:
        if name in FIELD_NAMES:
            object.__getattribute__(self, "__dict__").setdefault("_read", set()).add(name)
        return object.__getattribute__(self, name)


def test_checker_reads_only_the_declared_fields() -> None:
    # The importer fills only CHECKED_FIELDS on a reused record; reading any other field would
    # see a stale value from another row.
    read: set[str] = set()
    for device in _many_devices():
        watched = _Watched(**{k: getattr(device, k) for k in FIELD_NAMES})
        consistency_warnings(watched)
        read |= watched.__dict__.get("_read", set())
    assert read <= set(CHECKED_FIELDS)
    assert {"designation", "material", "polarity", "ptot", "ft"} <= read


def test_reused_record_gives_the_same_warnings_as_fresh_ones() -> None:
    probe = Device(designation="")
    for device in _many_devices():
        probe.__dict__.update({k: getattr(device, k) for k in CHECKED_FIELDS})
        assert consistency_warnings(probe) == consistency_warnings(device)
