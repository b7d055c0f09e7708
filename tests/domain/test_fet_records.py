"""FET records (MOSFET, JFET): fields, units, signs, cross-field rules, kind-specific fields.

Sources of the expected values:

* SI prefixes and units (BIPM SI Brochure, 9th ed., table 7 for the prefixes; coulomb, farad,
  siemens, second from its table 4): "25 nC" is 25e-9 C, "1.2 nF" 1.2e-9 F, "12 mS" 0.012 S.
* Sign conventions of FET threshold and cut-off voltages: IEC 60747-8 (discrete devices,
  field-effect transistors), letter symbols V(GS)th and V(GS)off, from memory; and Horowitz &
  Hill, The Art of Electronics, 3rd ed., ch. 3 (an N-channel JFET is cut off with the gate
  some volts negative; an N-channel enhancement MOSFET needs the gate positive), from memory.
* Qgd is one part of the total gate charge Qg (Horowitz & Hill, 3rd ed., 3.5.4 on gate charge,
  from memory), so Qgd <= Qg.
* Everything else here (plausible ranges, which fields belong to which kind) is common practice.
"""

from __future__ import annotations

import pytest

from partsdb.device import (
    FIELDS,
    InvalidRecord,
    fields_for,
    parse_device,
    replace,
)

POWER_N = {"designation": "HX-N60T", "kind": "mosfet", "polarity": "N-channel", "material": "si",
           "vds": "60 V", "vgs_max": "±20 V", "id_max": "30A", "id_max_ref": "Tc",
           "ptot": "75W", "ptot_ref": "case", "tj_max": "175", "rth_jc": "2 K/W",
           "rds_on": "28 mΩ", "rds_on_vgs": "10V", "rds_on_id": "15 A",
           "vgs_th_min": "2V", "vgs_th_max": "4 V", "qg": "25nC", "qgd": "8 nC",
           "ciss": "1.2nF", "body_diode": "yes", "trr": "60ns", "package": "TO-220",
           "pinout": "g-d-s"}
AUDIO_N_JFET = {"designation": "HX-J12", "kind": "jfet", "polarity": "n", "material": "si",
                "vds": "40V", "vgs_off_min": "-0.5 V", "vgs_off_max": "-2.5V",
                "idss_min": "2.6mA", "idss_max": "6.5 mA", "yfs": "12mS", "yfs_id": "3mA",
                "ptot": "300mW", "ptot_ref": "ambient", "ciss": "13pF", "en": "2 nV/rtHz",
                "pinout": "sgd"}


def problems_of(raw: dict[str, object]) -> dict[str, str]:
    with pytest.raises(InvalidRecord, match=r"^[a-z_]+: ") as info:
        parse_device(raw)
    message = str(info.value)
    assert "\n" not in message  # one line, whatever the number of problems
    return dict(info.value.problems)


def test_power_mosfet_in_si_base_units() -> None:
    d = parse_device(POWER_N)
    # Hand conversions (SI prefixes): 28 mΩ = 0.028 Ω, 25 nC = 2.5e-8 C, 1.2 nF = 1.2e-9 F.
    assert (d.kind, d.mode, d.polarity) == ("mosfet", "enhancement", "n")
    assert d.polarity_text == "N-channel"
    assert d.vds == 60.0 and d.vgs_max == 20.0 and d.id_max == 30.0
    assert d.id_max_ref == "case" and d.rth_jc == 2.0
    assert d.rds_on == pytest.approx(0.028) and d.rds_on_vgs == 10.0 and d.rds_on_id == 15.0
    assert (d.vgs_th_min, d.vgs_th_max) == (2.0, 4.0)
    assert d.qg == pytest.approx(25e-9) and d.qgd == pytest.approx(8e-9)
    assert d.ciss == pytest.approx(1.2e-9) and d.trr == pytest.approx(60e-9)
    assert d.body_diode is True and d.pinout == "GDS"
    assert d.vceo is None and d.ic_max is None  # no bipolar field on a FET


def test_audio_jfet_in_si_base_units() -> None:
    d = parse_device(AUDIO_N_JFET)
    assert d.mode is None  # a JFET has no mode to record (always depletion)
    assert (d.vgs_off_min, d.vgs_off_max) == (-0.5, -2.5)
    assert d.idss_min == pytest.approx(2.6e-3) and d.idss_max == pytest.approx(6.5e-3)
    assert d.yfs == pytest.approx(12e-3) and d.yfs_id == pytest.approx(3e-3)
    assert d.en == pytest.approx(2e-9) and d.ciss == pytest.approx(13e-12)
    assert d.body_diode is None  # unknown stays unknown, never "no"


def test_p_channel_minus_signs_as_written_on_the_datasheet() -> None:
    """A P-channel datasheet writes Vds -60 V, Id -12 A, Rds(on) at Vgs -10 V: the ratings are
    stored as magnitudes, the threshold keeps its (negative) sign."""
    d = parse_device({**POWER_N, "polarity": "p", "vds": "-60V", "id_max": "-12 A",
                      "rds_on_vgs": "-10V", "rds_on_id": "-6A", "vgs_th_min": "-2",
                      "vgs_th_max": "-4V"})
    assert (d.vds, d.id_max, d.rds_on_vgs, d.rds_on_id) == (60.0, 12.0, 10.0, 6.0)
    assert (d.vgs_th_min, d.vgs_th_max) == (-2.0, -4.0)


@pytest.mark.parametrize(("change", "field", "words"), [
    # N-channel enhancement: Vgs(th) positive (IEC 60747-8 sign convention, from memory).
    ({"vgs_th_min": "-2V"}, "vgs_th_min", "expected Vgs(th) positive"),
    # P-channel enhancement: negative.
    ({"polarity": "p"}, "vgs_th_min", "expected Vgs(th) negative"),
    # N-channel depletion MOSFET: the threshold (cut-off) is negative.
    ({"mode": "depletion", "vgs_th_min": "-1", "vgs_th_max": "3"}, "vgs_th_max",
     "expected Vgs(th) negative"),
    ({"vgs_th_min": "4V", "vgs_th_max": "2V"}, "vgs_th_min", "expected |min| <= |max|"),
    ({"qgd": "30nC"}, "qgd", "expected qgd <= qg"),
    ({"rds_on_vgs": ""}, "rds_on_vgs", "gate voltage Rds(on) is specified at"),
    ({"body_diode": "no"}, "trr", "expected trr blank"),
    ({"idss_min": "1mA"}, "idss_min", "enhancement MOSFET has no Idss"),
    ({"pinout": "EBC"}, "pinout", "G, D, S"),
    ({"pinout": "GGD"}, "pinout", "G, D, S"),
    ({"vceo": "60V"}, "vceo", "a bipolar field (Vceo), not used on a mosfet record"),
    ({"hfe_min": "100"}, "hfe_min", "bipolar field"),
    ({"vgs_off_min": "-1V"}, "idss_min", "enhancement MOSFET"),
    ({"polarity": "npn"}, "polarity", "expected n or p (the channel)"),
    ({"material": "ge"}, "material", "expected si or other"),
    ({"rds_on": "28 kV"}, "rds_on", "resistance"),
    ({"qg": "0"}, "qg", "positive"),
    ({"qg": "25 mC"}, "qg", "outside the plausible range"),  # a slipped prefix
    ({"body_diode": "maybe"}, "body_diode", "yes/no"),
    ({"mode": "enh-ish"}, "mode", "enhancement, depletion"),
])
def test_mosfet_rules(change: dict[str, str], field: str, words: str) -> None:
    problems = problems_of({**POWER_N, **change})
    assert words in problems[field]


@pytest.mark.parametrize(("change", "field", "words"), [
    # N-channel JFET: cut off with the gate negative (Horowitz & Hill 3rd ed. ch. 3, from memory).
    ({"vgs_off_min": "0.5V"}, "vgs_off_min", "expected Vgs(off) negative"),
    # P-channel JFET: positive.
    ({"polarity": "p"}, "vgs_off_min", "expected Vgs(off) positive"),
    ({"vgs_off_min": "-3V"}, "vgs_off_min", "expected |min| <= |max|"),
    ({"idss_min": "8mA"}, "idss_min", "expected |min| <= |max|"),
    ({"vgs_off_min": "0"}, "vgs_off_min", "other than 0"),
    ({"rds_on": "10 Ω", "rds_on_vgs": "10V"}, "rds_on", "a MOSFET field"),
    ({"vgs_th_min": "1V"}, "vgs_th_min", "a MOSFET field"),
    ({"body_diode": "yes"}, "body_diode", "a MOSFET field"),
    ({"mode": "enhancement"}, "mode", "a JFET is always depletion-mode"),
    ({"ic_max": "10mA"}, "ic_max", "a bipolar field"),
    ({"en": "2 nV"}, "en", "noise density"),
])
def test_jfet_rules(change: dict[str, str], field: str, words: str) -> None:
    problems = problems_of({**AUDIO_N_JFET, **change})
    assert words in problems[field]


def test_the_rules_hold_on_the_other_side_of_each_boundary() -> None:
    """Each refused case above has an accepted neighbour: equal windows and Qgd = Qg pass, a
    P-channel JFET with a positive Vgs(off) passes, a depletion MOSFET may carry Idss."""
    parse_device({**POWER_N, "vgs_th_min": "3V", "vgs_th_max": "3V", "qgd": "25nC"})
    parse_device({**AUDIO_N_JFET, "polarity": "p", "vgs_off_min": "0.5", "vgs_off_max": "2.5"})
    parse_device({**AUDIO_N_JFET, "idss_min": "6.5mA", "mode": "depletion"})
    d = parse_device({**POWER_N, "mode": "depletion", "vgs_th_min": "-1V", "vgs_th_max": "-3V",
                      "idss_min": "100mA"})
    assert d.mode == "depletion" and d.idss_min == pytest.approx(0.1)
    parse_device({**POWER_N, "body_diode": "no", "trr": ""})
    parse_device({**POWER_N, "pinout": "S-G-G-D"})  # a dual-gate FET's four leads


def test_bipolar_records_keep_their_meaning_of_n_and_p() -> None:
    d = parse_device({"designation": "QX1", "kind": "bjt", "polarity": "p", "material": "si"})
    assert d.polarity == "pnp"
    problems = problems_of({"designation": "QX1", "kind": "bjt", "polarity": "n",
                            "material": "si", "vds": "40V", "pinout": "GDS"})
    assert "a FET field (Vds), not used on a bjt record" in problems["vds"]
    assert "E, B, C" in problems["pinout"]


@pytest.mark.parametrize("word", ["n-channel", "N channel", "Nch", "N-CH", "n"])
def test_channel_aliases(word: str) -> None:
    assert parse_device({**AUDIO_N_JFET, "polarity": word}).polarity == "n"


def test_changing_the_kind_refuses_the_old_kinds_fields() -> None:
    d = parse_device(AUDIO_N_JFET)
    with pytest.raises(InvalidRecord, match=r"idss_min: a FET field .* not used on a bjt record"):
        replace(d, kind="bjt", polarity="npn")


def test_every_fet_field_is_in_the_form_of_its_kind_only() -> None:
    mosfet = {f.name for f in fields_for("mosfet")}
    jfet = {f.name for f in fields_for("jfet")}
    bjt = {f.name for f in fields_for("bjt")}
    assert {"rds_on", "vgs_th_min", "qg", "body_diode", "trr", "mode"} <= mosfet - jfet - bjt
    assert {"vgs_off_min", "idss_max", "yfs", "en", "ciss", "vds"} <= jfet - bjt
    assert {"vceo", "hfe_min", "ft", "icbo"} <= bjt - mosfet - jfet
    assert {"ptot", "ptot_ref", "tj_max", "rth_jc", "package", "pinout"} <= bjt & mosfet & jfet
    assert len(FIELDS) == len({f.name for f in FIELDS})
