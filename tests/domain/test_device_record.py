"""Validation of device records: fields, units, cross-field rules, defaults."""

from __future__ import annotations

import pytest

from partsdb.device import DEFAULT_TJ_MAX, FIELD_NAMES, InvalidRecord, parse_device

GOOD = {"designation": "QX 17", "kind": "bjt", "polarity": "npn", "material": "si",
        "vceo": "45V", "vcbo": "50 V", "ic_max": "100mA", "ptot": "500mW", "ptot_ref": "ambient",
        "hfe_min": "110", "hfe_max": "450", "ft": "250MHz", "pinout": "e-b-c"}


def test_good_record_in_si_units() -> None:
    d = parse_device(GOOD)
    assert (d.vceo, d.ic_max, d.ptot, d.ft) == (45.0, 0.1, 0.5, 250e6)
    assert d.pinout == "EBC"
    assert d.key == "QX17"
    assert d.icbo is None  # optional fields stay empty, never 0


def problems_of(raw: dict[str, object]) -> dict[str, str]:
    with pytest.raises(InvalidRecord, match=r"^[a-z_]+: ") as info:  # names the field first
        parse_device(raw)
    return dict(info.value.problems)


def test_all_problems_reported_together() -> None:
    bad = {**GOOD, "vceo": "4O0V", "hfe_min": "500", "hfe_max": "100", "colour": "red"}
    problems = problems_of(bad)
    assert "4O0V" in problems["vceo"]
    assert "hfe_min" in problems and "max" in problems["hfe_min"]
    assert "known fields" in problems["colour"]


@pytest.mark.parametrize(
    ("change", "field"),
    [
        ({"vcbo": "30V"}, "vcbo"),  # Vcbo below Vceo: impossible (common practice)
        ({"ft": "50 Hz"}, "ft"),  # outside the plausible 1 kHz..100 GHz
        ({"vceo": "-5V"}, "vceo"),  # ratings positive
        ({"ic_max": "0"}, "ic_max"),
        ({"polarity": "nnp"}, "polarity"),
        ({"kind": "fet"}, "kind"),
        ({"pinout": "EBB"}, "pinout"),
        ({"vbe_on": "0.65V"}, "vbe_ic"),  # a Vbe without its test current is not usable
        ({"ptot_ref": ""}, "ptot_ref"),
        ({"obsolete": "maybe"}, "obsolete"),
        ({"low_stock": "2.5"}, "low_stock"),
    ],
)
def test_rules(change: dict[str, str], field: str) -> None:
    assert field in problems_of({**GOOD, **change})


def test_required_fields() -> None:
    raw = dict(GOOD)
    del raw["polarity"]
    assert "polarity" in problems_of(raw)


def test_material_default_tj_is_reported_as_assumed() -> None:
    ge = parse_device({**GOOD, "material": "germanium"})
    assert ge.tj_max_or_default() == (DEFAULT_TJ_MAX["ge"], True)
    si = parse_device({**GOOD, "tj_max": "175"})
    assert si.tj_max_or_default() == (175.0, False)


def test_to_dict_uses_csv_column_names() -> None:
    assert list(parse_device(GOOD).to_dict()) == list(FIELD_NAMES)
