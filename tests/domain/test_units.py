"""Engineering notation: SI prefixes, RKM codes, unit checks, and format/parse round trips."""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from partsdb.units import UnitError, format_quantity, parse_quantity, parse_range


@pytest.mark.parametrize(
    ("text", "unit", "expected"),
    [
        # SI prefixes: BIPM SI Brochure, 9th edition (2019), table 7.
        ("40V", "V", 40.0),
        ("40 V", "V", 40.0),
        ("1.2 kV", "V", 1200.0),
        ("200mA", "A", 0.2),
        ("5uA", "A", 5e-6),
        ("5 µA", "A", 5e-6),
        ("3nA", "A", 3e-9),
        ("300 MHz", "Hz", 3e8),
        ("1.5 GHz", "Hz", 1.5e9),
        ("0.625W", "W", 0.625),
        ("625 mW", "W", 0.625),
        ("1.5e-3 A", "A", 1.5e-3),
        ("150", "°C", 150.0),
        ("8 K/W", "K/W", 8.0),
        # RKM code, IEC 60062:2016 clause 5 (letter in place of the decimal point; R for ohms).
        ("2k2", "Ω", 2200.0),
        ("4R7", "Ω", 4.7),
        ("R47", "Ω", 0.47),
        ("1M5", "Ω", 1.5e6),
        ("47R", "Ω", 47.0),
        ("47k", "Ω", 47e3),
        ("47 kΩ", "Ω", 47e3),
        ("10 ohm", "Ω", 10.0),
        # "K" for kilo is workshop spelling (common practice), accepted.
        ("2K2", "Ω", 2200.0),
        ("100", "", 100.0),
    ],
)
def test_parses_engineering_notation(text: str, unit: str, expected: float) -> None:
    assert parse_quantity(text, unit, "f") == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(
    ("text", "unit"),
    [
        ("4O0V", "V"),  # letter O for zero: quantiphy alone would read 4 with unit "O0V"
        ("-", "V"),
        ("", "V"),
        ("fast", "Hz"),
        ("40 A", "V"),  # a current in a voltage field
        ("2k2x", "Ω"),
        ("1m", ""),  # a prefix on a dimensionless value
        ("nan", "V"),
        ("inf", "V"),
        ("12 V V", "V"),
    ],
)
def test_refuses_junk_naming_field_value_and_unit(text: str, unit: str) -> None:
    with pytest.raises(UnitError, match=r"^vceo: .* is not valid; expected ") as info:
        parse_quantity(text, unit, "vceo")
    message = str(info.value)
    assert "vceo" in message and repr(text) in message and "expected" in message


def test_refuses_bool_and_none() -> None:
    for bad in (True, None, object()):
        with pytest.raises(UnitError, match=r"^vceo: .* is not valid; expected a voltage"):
            parse_quantity(bad, "V", "vceo")


@given(st.floats(min_value=1e-13, max_value=1e11, allow_nan=False, allow_infinity=False),
       st.sampled_from(["V", "A", "W", "Hz", "Ω"]))
def test_format_then_parse_round_trips(value: float, unit: str) -> None:
    # Round trip to the printed precision: format keeps 6 significant digits here.
    text = format_quantity(value, unit, digits=6)
    assert parse_quantity(text, unit, "f") == pytest.approx(value, rel=1e-5)


@given(st.integers(min_value=1, max_value=999), st.integers(min_value=0, max_value=9),
       st.sampled_from([("k", 1e3), ("M", 1e6), ("R", 1.0)]))
def test_rkm_matches_decimal_reading(whole: int, frac: int, prefix: tuple[str, float]) -> None:
    # IEC 60062 RKM: "4k7" means 4.7 x 10^3.
    letter, scale = prefix
    assert parse_quantity(f"{whole}{letter}{frac}", "Ω", "r") == pytest.approx(
        float(f"{whole}.{frac}") * scale)


def test_format_uses_si_prefixes() -> None:
    assert format_quantity(0.2, "A") == "200 mA"
    assert format_quantity(3e8, "Hz") == "300 MHz"
    assert format_quantity(None, "V") == "—"
    assert format_quantity(float("nan"), "V") == "—"


def test_ranges() -> None:
    r = parse_range("60..180", "", "hfe")
    assert (r.low, r.high) == (60, 180)
    assert parse_range("100", "", "hfe").low == 100
    with pytest.raises(UnitError, match="hfe"):
        parse_range("200..50", "", "hfe")
    assert math.isclose(parse_range("1mA..10mA", "A", "ic").high, 0.01)


@given(st.decimals(min_value=1, max_value=999, places=3, allow_nan=False, allow_infinity=False),
       st.sampled_from(["T", "G", "M", "k", "", "m", "u", "n", "p"]),
       st.sampled_from(["V", "A", "W", "Hz"]))
def test_agrees_with_quantiphy_on_valid_text(number, prefix: str, unit: str) -> None:  # type: ignore[no-untyped-def]
    # Reference library: quantiphy reads well-formed SI text correctly; our strict parser must
    # give the same value for every text it accepts.
    from quantiphy import Quantity

    text = f"{number}{prefix}{unit}"
    assert parse_quantity(text, unit, "f") == pytest.approx(float(Quantity(text)), rel=1e-12)


# ---------------------------------------------------------------- the column-wise reader
# parse_quantities is an import's fast path; its oracle is parse_quantity cell by cell (itself
# held to the BIPM prefixes, IEC 60062 and quantiphy above): same value, or refused alike.

_column_cell = st.one_of(
    st.builds(lambda number, gap, prefix, unit: f"{number}{gap}{prefix}{unit}",
              st.sampled_from(["40", "0.5", "1e3", "2.", ".7", "-3", "12", "1e999", "1_000",
                               "inf", ".", "1-2", "+4e1"]),
              st.sampled_from(["", " "]),
              st.sampled_from(["", "m", "M", "k", "K", "u", "µ", "n", "U", "t", "G", "T"]),
              st.sampled_from(["V", "v", "A", "Hz", "W", "Ω", "ohm", "R", "°C", "C", "K/W", "",
                               "x"])),
    st.sampled_from(["2k2", "4R7", "R47", "47R", "1M5", "4m7", "", "—", "junk"]),
)


@given(st.lists(_column_cell, min_size=1, max_size=15),
       st.sampled_from(["V", "A", "W", "Hz", "Ω", "°C", "K/W", ""]))
def test_column_reader_agrees_with_parse_quantity(cells: list[str], unit: str) -> None:
    from partsdb.units import parse_quantities

    values, errors = parse_quantities(cells, unit, "f")
    for pos, cell in enumerate(cells):
        if cell in ("", "—"):
            assert math.isnan(values[pos]) and pos not in errors, cell
            continue
        try:
            expected = parse_quantity(cell, unit, "f")
        except UnitError as err:
            assert str(errors[pos]) == str(err), cell
            assert math.isnan(values[pos])
            continue
        assert pos not in errors, (cell, errors.get(pos))
        assert values[pos] == pytest.approx(expected, rel=1e-12), cell


def test_column_reader_refuses_what_float_alone_would_take() -> None:
    # Python's float() reads "1_000", "inf" and "1e999" (as inf); a quantity is none of them.
    from partsdb.units import parse_quantities

    values, errors = parse_quantities(["40", "1_000", "inf", "1e999", "40 V", "4R7"], "V", "vceo")
    assert sorted(errors) == [1, 2, 3, 5]
    assert values[0] == 40.0 and values[4] == 40.0
    assert str(errors[3]) == "vceo: '1e999' is not valid; expected a voltage such as 40V or 1.2 kV"
