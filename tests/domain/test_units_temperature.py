"""Ambient and case temperatures: °C by default, kelvin with a K (issue 13).

Conversion by the SI Brochure, 9th ed., 2.3.1: t/°C = T/K - 273.15.
"""

from __future__ import annotations

import pytest

from partsdb.units import UnitError, parse_quantity, parse_temperature


@pytest.mark.parametrize(("text", "celsius"), [
    ("45", 45.0), ("45C", 45.0), ("45 °C", 45.0), ("45°C", 45.0), ("45 degC", 45.0),
    ("-20", -20.0), ("-55 °C", -55.0), ("300", 300.0), (45, 45.0), (45.5, 45.5),
    # SI Brochure 9th ed. 2.3.1: 318 K = 44.85 °C, 313 K = 39.85 °C, 273.15 K = 0 °C.
    ("318K", 44.85), ("318 K", 44.85), ("313K", 39.85), ("273.15 K", 0.0),
])
def test_temperatures_in_celsius_and_kelvin(text: object, celsius: float) -> None:
    assert parse_temperature(text, "ambient") == pytest.approx(celsius, abs=1e-9)


@pytest.mark.parametrize("text", ["", "abc", "45 V", "45kK", "45 mK", "-5 K", "-300", "4 5",
                                  "nan", "1e999"])
def test_bad_temperatures_name_the_field(text: str) -> None:
    with pytest.raises(UnitError) as err:
        parse_temperature(text, "case")
    assert str(err.value).startswith("case:") and "\n" not in str(err.value)


def test_elsewhere_k_stays_kilo() -> None:
    assert parse_quantity("2K", "Ω", "r1") == pytest.approx(2000.0)
    assert parse_quantity("1.5K", "V", "vce") == pytest.approx(1500.0)
