"""The designation decoder against the published numbering schemes.

Designations here are invented but follow each scheme's shape; the expected meaning of every
letter comes from the standard named in the comment beside it (Pro Electron; JIS C 7012;
JEDEC EIA-370; the older European "O" scheme). Details recalled without the standard at hand
are marked "from memory", and the decoder must say so in ``inferred``.
"""

from __future__ import annotations

import pytest

from partsdb.designations import (
    JEDEC_PREFIX,
    JIS_TYPE,
    PRO_ELECTRON_MATERIAL,
    PRO_ELECTRON_TYPE,
    decode,
    normalize,
)

# ---------------------------------------------------------------- normalize (kept as it was)


@pytest.mark.parametrize(("raw", "key"), [
    ("bc 547-b", "BC547B"),
    ("2sc 1815", "2SC1815"),
    ("2N.3055_a/x", "2N3055AX"),
    ("  oc\t71 ", "OC71"),
])
def test_normalize_folds_case_and_separators(raw: str, key: str) -> None:
    # Project rule (database key): upper case; spaces, dashes, dots, underscores, slashes removed.
    assert normalize(raw) == key


# ---------------------------------------------------------------- Pro Electron


@pytest.mark.parametrize(("name", "material"), [
    ("AC384", "ge"),     # Pro Electron 1st letter A: germanium (band gap 0.6-1.0 eV)
    ("BC384", "si"),     # Pro Electron 1st letter B: silicon (1.0-1.3 eV)
    ("CQ384", "iii-v"),  # Pro Electron 1st letter C: III-V such as GaAs (> 1.3 eV)
    ("DP384", "other"),  # Pro Electron 1st letter D: band gap < 0.6 eV
    ("RP384", "other"),  # Pro Electron 1st letter R: compound, junction-less devices
])
def test_pro_electron_first_letter_is_material(name: str, material: str) -> None:
    d = decode(name)
    assert d.scheme == "pro-electron"
    assert d.material == material
    assert d.polarity is None  # Pro Electron does not encode polarity


@pytest.mark.parametrize(("letter", "application", "power_class"), [
    ("C", "audio", "small-signal"),      # Pro Electron 2nd letter C: audio, Rth j-mb > 15 K/W
    ("D", "audio", "power"),             # D: audio power, Rth j-mb <= 15 K/W
    ("F", "rf", "small-signal"),         # F: RF small-signal
    ("L", "rf", "power"),                # L: RF power
    ("S", "switching", "small-signal"),  # S: switching small-signal
    ("U", "switching", "power"),         # U: switching power
])
def test_pro_electron_transistor_letters(letter: str, application: str, power_class: str) -> None:
    d = decode(f"B{letter}384")
    assert (d.family, d.application, d.power_class, d.type_letter) == (
        "transistor", application, power_class, letter)
    assert d.inferred == []  # these letters are from the standard, not from memory


@pytest.mark.parametrize(("letter", "family", "words"), [
    ("A", "diode", "signal diode"),              # Pro Electron 2nd letter A
    ("B", "diode", "varicap"),                   # B: variable-capacitance diode
    ("E", "diode", "tunnel"),                    # E: tunnel diode
    ("G", "other", "hybrid"),                    # G: hybrid / miscellaneous
    ("H", "sensor", "magnetic"),                 # H: magnetic-field sensitive (Hall)
    ("N", "optocoupler", "optocoupler"),         # N: optocoupler
    ("P", "sensor", "radiation detector"),       # P: radiation detector
    ("Q", "other", "light emitter"),             # Q: radiation generator / light emitter
    ("R", "thyristor", "low power"),             # R: low-power thyristor
    ("T", "thyristor", "power"),                 # T: power thyristor / triac
    ("W", "other", "surface acoustic wave"),     # W: SAW device
    ("X", "diode", "multiplier"),                # X: multiplier diode
    ("Y", "diode", "rectifier"),                 # Y: rectifier
    ("Z", "diode", "zener"),                     # Z: voltage reference / zener
])
def test_pro_electron_other_letters(letter: str, family: str, words: str) -> None:
    d = decode(f"B{letter}384")
    assert d.scheme == "pro-electron"
    assert d.family == family
    assert words in (d.device_type or "")
    assert d.application is None and d.power_class is None


@pytest.mark.parametrize("letter", ["K", "M"])
def test_pro_electron_letters_from_memory_say_so(letter: str) -> None:
    # K (Hall generator, open circuit) and M (Hall modulator): from memory, so flagged.
    d = decode(f"B{letter}384")
    assert d.scheme == "pro-electron"
    assert any("from memory" in note for note in d.inferred)


def test_pro_electron_tables_cover_every_letter_of_the_standard() -> None:
    # Pro Electron letter lists (material A-D, R; type letters as published).
    assert set(PRO_ELECTRON_MATERIAL) == set("ABCDR")
    assert set("ABCDEFGHLNPQRSTUWXYZ") <= set(PRO_ELECTRON_TYPE)


@pytest.mark.parametrize(("name", "serial", "serial_class", "letter"), [
    ("BC384", "384", "consumer", "C"),     # consumer: two letters + three digits 100-999
    ("BC100", "100", "consumer", "C"),     # lowest consumer serial
    ("BC999", "999", "consumer", "C"),     # highest consumer serial
    ("BFQ77", "Q77", "industrial", "F"),   # industrial: third letter + two digits
    ("BSX13", "X13", "industrial", "S"),
    ("BDW64", "W64", "industrial", "D"),
])
def test_pro_electron_serials(name: str, serial: str, serial_class: str, letter: str) -> None:
    d = decode(name)
    assert (d.serial, d.serial_class, d.type_letter) == (serial, serial_class, letter)


@pytest.mark.parametrize("name", [
    "BC099",    # consumer serials run 100-999
    "BC38",     # two letters need three digits
    "BFQ377",   # three letters need two digits
    "BC3845",   # four digits: not a Pro Electron shape
])
def test_pro_electron_shapes_that_do_not_fit_are_unknown(name: str) -> None:
    d = decode(name)
    assert d.scheme == "unknown"
    assert d.material is None and d.device_type is None


@pytest.mark.parametrize(("suffix", "meaning"), [
    ("A", "low hFE"),     # Pro Electron gain group A: low hFE
    ("B", "medium hFE"),  # B: medium
    ("C", "high hFE"),    # C: high
])
def test_pro_electron_gain_group(suffix: str, meaning: str) -> None:
    d = decode(f"BC384{suffix}")
    assert d.gain_group == suffix
    assert any(meaning in note for note in d.notes)


def test_pro_electron_no_suffix_means_no_gain_group() -> None:
    # Pro Electron: no suffix = gain group not classified.
    assert decode("BC384").gain_group is None


def test_power_type_letter_suffix_is_not_read_as_gain_group() -> None:
    # Common practice: on power types (BD...C) the letter is usually a voltage grade.
    d = decode("BD384C")
    assert d.gain_group is None and d.suffix == "C"
    assert any("voltage grade" in note for note in d.notes)


def test_numeric_hfe_group_after_a_dash() -> None:
    # Common practice: "-16/-25/-40" after a Pro Electron name is a maker's numeric hFE group.
    d = decode("BC384-25")
    assert (d.scheme, d.serial, d.suffix, d.gain_group) == ("pro-electron", "384", "25", None)


def test_zener_suffix_tolerance_and_voltage() -> None:
    # Pro Electron zener suffix: tolerance letter (from memory: C = ±5 %) and voltage, V = point.
    d = decode("BZX84C6V8")
    assert d.family == "diode" and d.serial == "X84"
    assert "working voltage 6.8 V" in d.notes
    assert any("from memory" in note for note in d.inferred)


# ---------------------------------------------------------------- JIS C 7012


@pytest.mark.parametrize(("letter", "family", "polarity", "application"), [
    ("A", "bjt", "pnp", "high-frequency"),  # JIS C 7012: A PNP high-frequency
    ("B", "bjt", "pnp", "audio"),           # B PNP audio (low) frequency
    ("C", "bjt", "npn", "high-frequency"),  # C NPN high-frequency
    ("D", "bjt", "npn", "audio"),           # D NPN audio frequency
    ("F", "thyristor", None, None),         # F thyristor (P-gate)
    ("G", "thyristor", None, None),         # G thyristor (N-gate)
    ("H", "ujt", None, None),               # H unijunction transistor
    ("J", "fet", "p", None),                # J P-channel FET (the channel kept as polarity)
    ("K", "fet", "n", None),                # K N-channel FET
    ("M", "triac", None, None),             # M triac
])
def test_jis_three_terminal_letters(letter: str, family: str, polarity: str | None,
                                    application: str | None) -> None:
    d = decode(f"2S{letter}3377")
    assert d.scheme == "jis"
    assert (d.family, d.polarity, d.application) == (family, polarity, application)
    assert d.material is None  # JIS C 7012 does not encode material
    assert d.inferred == []


def test_jis_channel_and_gate_words() -> None:
    # JIS C 7012: J is P-channel, K N-channel; F P-gate, G N-gate thyristor.
    assert "P-channel" in (decode("2SJ377").device_type or "")
    assert "N-channel" in (decode("2SK377").device_type or "")
    assert "P-gate" in (decode("2SF377").device_type or "")
    assert "N-gate" in (decode("2SG377").device_type or "")


@pytest.mark.parametrize(("letter", "words"), [
    ("E", "tunnel"),      # from memory: E Esaki (tunnel) diode
    ("Q", "light"),       # from memory: Q light-emitting diode
    ("R", "rectifier"),   # from memory: R rectifier
    ("S", "small-signal"),  # from memory: S small-signal / switching diode
    ("T", "avalanche"),   # from memory: T avalanche diode
    ("V", "varicap"),     # from memory: V variable capacitance
    ("Z", "zener"),       # from memory: Z zener / voltage reference
])
def test_jis_diode_letters_are_marked_from_memory(letter: str, words: str) -> None:
    d = decode(f"1S{letter}377")
    assert d.scheme == "jis" and d.family == "diode"
    assert words in (d.device_type or "")
    assert any("from memory" in note for note in d.inferred)


def test_jis_table_has_every_listed_letter() -> None:
    # JIS C 7012 letters named in the standard, plus the diode letters (from memory).
    assert set("ABCDFGHJKM") | set("EQRSTVZ") <= set(JIS_TYPE)


@pytest.mark.parametrize(("name", "words"), [
    ("1S377", "diode"),                 # JIS C 7012: leading 1 = diode
    ("2S377", "three-terminal"),        # 2 = transistor / three terminals
    ("3S377", "four-terminal"),         # 3 = four terminals
])
def test_jis_leading_digit(name: str, words: str) -> None:
    d = decode(name)
    assert d.scheme == "jis" and words in (d.device_type or "")


def test_jis_serial_below_eleven_is_noted() -> None:
    # JIS C 7012: serial numbers start at 11.
    assert any("below 11" in n for n in decode("2SC7").notes)
    assert not any("below 11" in n for n in decode("2SC11").notes)


@pytest.mark.parametrize("suffix", ["A", "Y", "GR"])
def test_jis_suffix_is_version_or_rank(suffix: str) -> None:
    # JIS C 7012: suffix letters mark an improved version or an hFE rank (maker's).
    d = decode(f"2SC3377-{suffix}")
    assert d.suffix == suffix and d.serial == "3377"
    assert any("improved version or the maker's hFE rank" in n for n in d.notes)


@pytest.mark.parametrize(("marking", "registered", "polarity"), [
    ("C3377", "2SC3377", "npn"),   # JIS body marking omits 2S (common practice)
    ("A3377", "2SA3377", "pnp"),
    ("B377", "2SB377", "pnp"),
    ("D377Y", "2SD377Y", "npn"),
    ("K77", "2SK77", "n"),
])
def test_marking_without_2s_is_an_inference(marking: str, registered: str,
                                            polarity: str | None) -> None:
    d = decode(marking)
    assert d.scheme == "jis"
    assert d.registered_as == registered
    assert d.polarity == polarity
    assert "inference" in d.inferred[0] and "2S" in d.inferred[0]


def test_single_letter_outside_jis_is_not_read_as_jis() -> None:
    # Only JIS three-terminal letters are read as a marking without 2S.
    assert decode("X3377").scheme == "unknown"


# ---------------------------------------------------------------- JEDEC EIA-370


@pytest.mark.parametrize(("name", "family"), [
    ("1N7781", "diode"),           # JEDEC EIA-370: 1N diode
    ("2N7781", "three-terminal"),  # 2N transistor / three-terminal
    ("3N781", "four-terminal"),    # 3N four-terminal
    ("4N81", "optocoupler"),       # 4N optocoupler
    ("5N81", "optocoupler"),       # 5N optocoupler
])
def test_jedec_prefixes(name: str, family: str) -> None:
    d = decode(name)
    assert d.scheme == "jedec" and d.family == family
    # EIA-370: the number encodes neither polarity nor material.
    assert d.polarity is None and d.material is None
    assert any("neither polarity nor material" in n for n in d.notes)


def test_jedec_suffix_is_later_variant_with_no_polarity_implied() -> None:
    d = decode("2N7781A")
    assert d.suffix == "A" and d.serial == "7781"
    assert any("later variant" in n and "no polarity or material" in n for n in d.notes)


def test_jedec_table_lists_the_standard_prefixes() -> None:
    assert set("12345") <= set(JEDEC_PREFIX)


def test_jedec_military_prefix_is_stripped_and_flagged() -> None:
    # MIL-PRF-19500 qualification prefix (from memory).
    d = decode("JANTX2N7781")
    assert d.registered_as == "2N7781"
    assert any("from memory" in n for n in d.inferred)


# ---------------------------------------------------------------- older European scheme


@pytest.mark.parametrize(("name", "family", "words"), [
    ("OC83", "transistor", "transistor"),  # older European: OC transistor
    ("OA83", "diode", "diode"),            # OA diode
    ("OY83", "diode", "rectifier"),        # OY rectifier
    ("OAZ83", "diode", "zener"),           # OAZ zener
])
def test_legacy_european_is_germanium(name: str, family: str, words: str) -> None:
    d = decode(name)
    assert d.scheme == "legacy-european"
    assert d.family == family and words in (d.device_type or "")
    assert d.material == "ge"  # 1950s parts: germanium implied


def test_legacy_photoconductive_cell_is_not_germanium() -> None:
    # ORP photoconductive cell (cadmium sulphide), from memory.
    d = decode("ORP83")
    assert d.material == "other"
    assert any("from memory" in n for n in d.inferred)


# ---------------------------------------------------------------- unknown


@pytest.mark.parametrize("name", ["QX7781", "XYZ", "77", "TIQ31C", "", "O83"])
def test_unknown_names_imply_nothing(name: str) -> None:
    d = decode(name)
    assert d.scheme == "unknown"
    assert (d.material, d.polarity, d.device_type, d.family) == (None, None, None, None)
    assert d.inferred == []


def test_to_json_has_the_documented_keys() -> None:
    data = decode("bc 384-b").to_json()
    assert {"designation", "normalized", "scheme", "material", "polarity", "device_type",
            "application", "gain_group", "inferred"} <= set(data)
    assert data["designation"] == "bc 384-b" and data["normalized"] == "BC384B"
    assert data["standard"] == "Pro Electron"
