"""Header spellings, units in headers, outlines, ptot_ref by outline and plausibility
(partsdb.columns). Expected scales are the SI prefixes written out by hand (BIPM SI Brochure,
9th ed., table 7); the spellings and outline rules are common practice."""

from __future__ import annotations

import pytest

from partsdb.columns import (
    HEADER_TABLE,
    KNOWN_COLUMNS,
    bare_warning,
    header_key,
    infer_ptot_ref,
    map_headers,
    normalize_outline,
    plausibility_warnings,
    split_header,
)
from partsdb.device import FIELDS, parse_field
from partsdb.errors import InvalidInput


@pytest.mark.parametrize(("header", "field", "scale"), [
    ("Vce", "vceo", 1.0), ("VCEO", "vceo", 1.0), ("Vce max", "vceo", 1.0),
    ("Vce (V)", "vceo", 1.0), ("Ic (mA)", "ic_max", 1e-3), ("Ic [A]", "ic_max", 1.0),
    ("hFE", "hfe_min", 1.0), ("hfe min", "hfe_min", 1.0), ("hFE_max", "hfe_max", 1.0),
    ("Case", "package", 1.0), ("Package", "package", 1.0), ("Drawer", "location", 1.0),
    ("Location", "location", 1.0), ("Qty", "quantity", 1.0), ("Pcs", "quantity", 1.0),
    ("Type", "designation", 1.0), ("Ptot [W]", "ptot", 1.0), ("Pd (mW)", "ptot", 1e-3),
    ("fT/MHz", "ft", 1e6), ("ft (GHz)", "ft", 1e9), ("NPN/PNP", "polarity", 1.0),
    ("Icbo (nA)", "icbo", 1e-9), ("Tj max (°C)", "tj_max", 1.0), ("  POLARITY ", "polarity", 1.0),
])
def test_usual_spellings_map_to_their_field(header: str, field: str, scale: float) -> None:
    (col,) = map_headers([header]).columns
    assert col.field == field
    assert col.scale == pytest.approx(scale)


def test_every_field_answers_to_its_name_and_label_and_no_key_names_two_fields() -> None:
    for spec in FIELDS:
        assert HEADER_TABLE[header_key(spec.name)] == spec.name
        assert HEADER_TABLE[header_key(spec.label)] == spec.name
    assert set(HEADER_TABLE.values()) == set(KNOWN_COLUMNS)


def test_unknown_header_is_refused_with_a_suggestion_unless_ignored() -> None:
    with pytest.raises(InvalidInput) as err:
        map_headers(["Type", "Vcex", "Colour"])
    text = str(err.value)
    assert "column 'Vcex' matches no field; did you mean 'vceo'?" in text
    assert "known fields: designation" in text
    assert [c.field for c in map_headers(["Type", "Colour"], ignore=["colour"]).columns] == \
        ["designation", None]
    assert map_headers(["Type", "Colour"], ignore_unknown=True).columns[1].field is None
    mapped = map_headers(["Type", "Colour"], overrides={"Colour": "notes"})
    assert mapped.columns[1].field == "notes"


def test_map_unit_and_duplicate_problems_are_one_line_each() -> None:
    with pytest.raises(InvalidInput, match="'vcex' is not a known field"):
        map_headers(["Type"], overrides={"Type": "vcex"})
    with pytest.raises(InvalidInput, match="unit 'mV' is not valid for ic_max"):
        map_headers(["Ic"], units={"ic_max": "mV"})
    with pytest.raises(InvalidInput, match="columns 'Case' and 'Package' both name package"):
        map_headers(["Case", "Package"])
    # --unit overrides the unit written in the header
    assert map_headers(["Ic (A)"], units={"ic_max": "mA"}).columns[0].scale == pytest.approx(1e-3)


def test_split_header_keeps_names_that_are_not_units() -> None:
    assert split_header("Ic (mA)") == ("Ic", "mA")
    assert split_header("fT/MHz") == ("fT", "MHz")
    assert split_header("NPN/PNP") == ("NPN/PNP", None)
    assert split_header("Notes (shop)") == ("Notes (shop)", None)


@pytest.mark.parametrize(("raw", "house"), [
    ("TO92", "TO-92"), ("to-220ab", "TO-220AB"), ("sot 23", "SOT-23"), ("TO-3", "TO-3"),
    ("to 126", "TO-126"), ("Mini-Melf", "Mini-Melf"),
])
def test_outlines_are_normalised(raw: str, house: str) -> None:
    assert normalize_outline(raw) == house


def test_ptot_reference_by_outline() -> None:
    # common practice: small-signal outlines are rated in free air, power outlines at the case
    assert infer_ptot_ref("TO-92") == "ambient"
    assert infer_ptot_ref("SOT-23") == "ambient"
    assert infer_ptot_ref("TO-220AB") == "case"
    assert infer_ptot_ref("TO-3") == "case"
    assert infer_ptot_ref("DIY-7") is None


def test_plausibility_of_values_for_an_outline() -> None:
    # common practice: a TO-92 carries well under 10 A and 2 W in free air
    assert plausibility_warnings("TO-92", "ambient", 0.5, 0.625) == []
    assert len(plausibility_warnings("TO-92", "ambient", 150.0, 3.0)) == 2
    assert plausibility_warnings("TO-3", "case", 15.0, 115.0) == []
    assert bare_warning("ic_max", 150.0) == \
        "ic_max: 150 A? if the column is in mA, use --unit ic_max=mA"
    assert bare_warning("ic_max", 15.0) is None


@pytest.mark.parametrize(("field", "word", "value"), [
    ("polarity", "PNP", "pnp"), ("polarity", "P-channel", "p"), ("polarity", "Nch", "n"),
    ("material", "germanium", "ge"), ("material", "Ge", "ge"), ("material", "Si", "si"),
    ("material", "silicon", "si"), ("ptot_ref", "Tc", "case"),
])
def test_usual_words_for_choices(field: str, word: str, value: str) -> None:
    assert parse_field(field, word) == value
