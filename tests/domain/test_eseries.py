"""Preferred values against IEC 60063 and the nearest-value rule."""

from __future__ import annotations

import math

import pytest

from partsdb.eseries import E6, E12, E24, nearest, neighbours, series_values

# IEC 60063:2015 "Preferred number series for resistors and capacitors", table 1, as printed
# (E24 +/-5 %, E12 +/-10 %, E6 +/-20 %), one decade.
IEC_E24 = "1.0 1.1 1.2 1.3 1.5 1.6 1.8 2.0 2.2 2.4 2.7 3.0 3.3 3.6 3.9 4.3 4.7 5.1 5.6 6.2 6.8 " \
          "7.5 8.2 9.1"
IEC_E12 = "1.0 1.2 1.5 1.8 2.2 2.7 3.3 3.9 4.7 5.6 6.8 8.2"
IEC_E6 = "1.0 1.5 2.2 3.3 4.7 6.8"


@pytest.mark.parametrize(("table", "printed"), [(E24, IEC_E24), (E12, IEC_E12), (E6, IEC_E6)],
                         ids=["E24", "E12", "E6"])
def test_tables_are_iec_60063(table: tuple[float, ...], printed: str) -> None:
    assert table == tuple(float(v) for v in printed.split())


def test_series_nest_as_the_standard_defines() -> None:
    # IEC 60063: E12 is every second E24 value, E6 every second E12 value.
    assert E24[::2] == E12
    assert E12[::2] == E6


def test_table_not_formula() -> None:
    # IEC 60063 keeps historical values: exactly eight E24 entries differ from
    # round(10^(i/24), 1) (2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2).
    formula = [round(10 ** (i / 24), 1) for i in range(24)]
    differ = [v for v, f in zip(E24, formula, strict=True) if v != f]
    assert differ == [2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2]


@pytest.mark.parametrize(("value", "series", "expected"), [
    (37.4e3, "E12", 39e3),      # log distance to 39k (0.042) beats 33k (0.125)
    (37.4e3, "E24", 36e3),
    (4.7e3, "E24", 4.7e3),      # a preferred value is itself, exactly
    (9.6, "E24", 10.0),         # across the decade edge
    (0.0121, "E6", 0.01),       # sub-ohm decades too (12.1 mOhm -> 10 mOhm)
    (1.2e6, "E6", 1.0e6),       # geometric midpoint of 1.0 and 1.5 is 1.2247
    (1.23e6, "E6", 1.5e6),
    (2.5, 12, 2.7),             # series by number
])
def test_nearest(value: float, series: str | int, expected: float) -> None:
    assert nearest(value, series) == expected


def test_nearest_is_nearest_on_log_scale_everywhere() -> None:
    # Independent brute force over six decades.
    all_values = [m * 10.0 ** d for d in range(-1, 6) for m in E24]
    for k in range(1, 400):
        x = 10 ** (k / 80.0)
        best = min(all_values, key=lambda v: abs(math.log(v / x)))
        assert nearest(x, "E24") == pytest.approx(best)


def test_neighbours() -> None:
    assert neighbours(4.8e3, "E12") == (4.7e3, 5.6e3)
    assert neighbours(4.7e3, "E12") == (4.7e3, 4.7e3)
    assert neighbours(9.5, "E6") == (6.8, 10.0)


@pytest.mark.parametrize("bad", [0.0, -10.0, math.inf, math.nan])
def test_bad_values_are_refused(bad: float) -> None:
    with pytest.raises(ValueError, match="value"):
        nearest(bad, "E12")


def test_unknown_series_is_refused() -> None:
    with pytest.raises(ValueError, match="series"):
        series_values("E7")
