"""FET names: what JIS C 7012 says (channel, terminal count), what Pro Electron and JEDEC do not
say (bipolar versus FET), and the consistency flags of a record that contradicts its name.

Source: JIS C 7012, type designation scheme, from memory: the leading digit is the number of
electrodes less one (2 = three leads, 3 = four leads); after "S" the letter J is a P-channel FET,
K an N-channel FET (junction or MOS alike), A/B PNP and C/D NPN bipolar transistors. 3SJ is
recalled from memory as the four-terminal P-channel form and is flagged as such by the decoder.
Pro Electron (second letter) and JEDEC EIA-370 (the digit before N) give no bipolar/FET split
(from memory).
"""

from __future__ import annotations

import pytest

from partsdb.consistency import consistency_warnings
from partsdb.designations import decode
from partsdb.device import Device


@pytest.mark.parametrize(("name", "channel", "words"), [
    ("2SK9999", "n", "N-channel FET (junction or MOS)"),
    ("2SJ9999", "p", "P-channel FET (junction or MOS)"),
    ("3SK9999", "n", "N-channel FET, four-terminal"),
    ("3SJ9999", "p", "P-channel FET, four-terminal"),
    ("K9999", "n", "N-channel FET"),  # a body marking without 2S, read as 2SK (an inference)
])
def test_jis_fet_letters_give_the_channel(name: str, channel: str, words: str) -> None:
    d = decode(name)
    assert d.scheme == "jis" and d.family == "fet"
    assert d.polarity == channel
    assert words in (d.device_type or "")


def test_3sj_is_marked_as_recalled_from_memory_and_3sk_is_not() -> None:
    assert any("3SJ" in i and "memory" in i for i in decode("3SJ9999").inferred)
    assert decode("3SK9999").inferred == []


def test_a_fet_suffix_is_an_idss_rank_not_an_hfe_rank() -> None:
    assert any("Idss rank" in n for n in decode("2SK9999-GR").notes)
    assert any("hFE rank" in n for n in decode("2SC9999-GR").notes)


@pytest.mark.parametrize("name", ["BF384", "BUK38", "2N9999", "3N999"])
def test_pro_electron_and_jedec_say_neither_bipolar_nor_fet(name: str) -> None:
    d = decode(name)
    assert d.polarity is None
    assert any("bipolar versus FET" in n or ("bipolar" in n and "FET" in n) for n in d.notes)
    for kind, polarity in (("mosfet", "n"), ("jfet", "p"), ("bjt", "npn")):
        found = consistency_warnings(Device(designation=name, kind=kind, polarity=polarity))
        assert not [w for w in found if "entered as" in w or "but entered" in w], found


def _warnings(**fields: object) -> list[str]:
    return consistency_warnings(Device(**fields))  # type: ignore[arg-type]


@pytest.mark.parametrize(("fields", "expected"), [
    # JIS C 7012: 2SK is an N-channel FET; a bipolar record under that name is flagged.
    ({"designation": "2SK9999", "kind": "bjt", "polarity": "npn"},
     ["designated JIS 2SK, meaning N-channel FET (junction or MOS), but entered as a bjt "
      "transistor"]),
    # 2SC is an NPN bipolar transistor; a MOSFET under that name is flagged.
    ({"designation": "2SC9999", "kind": "mosfet", "polarity": "n"},
     ["designated JIS 2SC, meaning NPN transistor, high-frequency, but entered as a MOSFET"]),
    # 2SJ is P-channel: an N-channel record contradicts it.
    ({"designation": "2SJ9999", "kind": "mosfet", "polarity": "n"},
     ["JIS 2SJ is P-channel but entered N-channel"]),
    ({"designation": "2SK9999", "kind": "jfet", "polarity": "p"},
     ["JIS 2SK is N-channel but entered P-channel"]),
    # 3SK: four electrodes; a three-lead pinout contradicts the digit.
    ({"designation": "3SK9999", "kind": "mosfet", "polarity": "n", "pinout": "GDS"},
     ["JIS 3SK has 4 leads (JIS C 7012: the leading digit is the electrode count less one) but "
      "the pinout GDS has 3"]),
])
def test_a_record_that_contradicts_its_jis_name_is_flagged(fields: dict[str, object],
                                                           expected: list[str]) -> None:
    assert _warnings(**fields) == expected


@pytest.mark.parametrize("fields", [
    {"designation": "2SK9999", "kind": "jfet", "polarity": "n", "pinout": "SGD"},
    {"designation": "2SK9999", "kind": "mosfet", "polarity": "n"},
    {"designation": "2SJ9999", "kind": "mosfet", "polarity": "p"},
    {"designation": "3SK9999", "kind": "mosfet", "polarity": "n", "pinout": "SGGD"},
    {"designation": "2SC9999", "kind": "bjt", "polarity": "npn"},
])
def test_a_record_that_agrees_with_its_jis_name_is_quiet(fields: dict[str, object]) -> None:
    assert _warnings(**fields) == []
