"""The demo cases of issue 13 as regression tests, run like a technician would.

The demo records are only inputs; each figure is checked against a hand formula named beside
it (fixed-Vbe Thevenin divider and stability factor: Boylestad & Nashelsky, Electronic Devices
and Circuit Theory, ch. 4, from memory; kelvin: SI Brochure, 9th ed., 2.3.1).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from click.testing import CliRunner, Result

from partsdb.cli import main

SWAP = ["bias", "divider", "--vcc", "-9V", "--r1", "47k", "--r2", "10k", "--rc", "2k2",
        "--re", "470", "--device", "OC375", "--substitute", "2SA8150"]


@pytest.fixture
def demo(demo_db) -> str:  # type: ignore[no-untyped-def]
    return str(demo_db.url)


def run(db: str, *args: str) -> Result:
    return CliRunner().invoke(main, ["--db", db, "-q", *args])


def test_oc375_swap_leakage_and_fix(demo: str) -> None:
    result = run(demo, *SWAP, "--format", "json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    orig = data["original"]
    # OC375 in the demo: hFE 60..140 (typical sqrt(60 x 140)), Icbo 10 µA, no Vbe(on)
    # (0.25 V assumed): S = (1 + b)(1 + Rth/Re)/(1 + b + Rth/Re) with Rth = 47k || 10k.
    beta, rth = math.sqrt(60 * 140), 47e3 * 10e3 / 57e3
    s = (1 + beta) * (1 + rth / 470) / (1 + beta + rth / 470)
    assert orig["leakage_ic"] == pytest.approx(s * 10e-6, rel=1e-6)
    assert orig["leakage_ic"] == pytest.approx(0.156e-3, rel=0.01)  # not 0.927 mA
    assert "leakage_ic" in data["substitute"]
    fix = data["fix"]
    design = beta * (9 * 10 / 57 - 0.25) / (rth + (beta + 1) * 470)  # Thevenin, no leakage
    assert fix["target_ic"] == pytest.approx(design, rel=1e-6)
    for series in ("e12", "e24"):
        opt = fix[series]
        assert opt["ic_hfe_min"] <= opt["ic"] <= opt["ic_hfe_max"]
        assert opt["region_hfe_min"] in ("active", "saturation", "cut-off")
        assert opt["region_hfe_max"] in ("active", "saturation", "cut-off")
    table = run(demo, *SWAP)
    assert table.exit_code == 0, table.output
    assert "raises Ic by 0.156 mA" in table.output
    assert "25 °C without leakage" in table.output
    assert "at hFE min" in table.output and "at hFE max" in table.output


def test_oc375_fix_at_45c_aims_at_the_25c_design_point(demo: str) -> None:
    cold = json.loads(run(demo, *SWAP, "--format", "json").output)
    warm = run(demo, *SWAP, "--ambient", "45 °C", "--format", "json")
    assert warm.exit_code == 0, warm.output
    data = json.loads(warm.output)
    assert data["fix"]["target_ic"] == pytest.approx(cold["fix"]["target_ic"], rel=1e-9)
    assert data["original"]["ic"] > data["fix"]["target_ic"]  # leakage-inflated, not copied


def test_check_takes_kelvin(demo: str) -> None:
    kelvin = run(demo, "check", "OC375", "--vce", "6V", "--ic", "10mA", "--ambient", "313K",
                 "--format", "json")
    assert kelvin.exit_code == 0, kelvin.output
    assert json.loads(kelvin.output)["ambient"] == pytest.approx(39.85)  # 313 K (SI 2.3.1)
    celsius = run(demo, "check", "OC375", "--vce", "6V", "--ic", "10mA", "--ambient",
                  "39.85C", "--format", "json")
    assert json.loads(celsius.output) == json.loads(kelvin.output)


@pytest.mark.parametrize("ambient", ["75", "100 °C", "400K"])
def test_check_refuses_ambient_at_or_above_tj_max(demo: str, ambient: str) -> None:
    result = run(demo, "check", "OC375", "--vce", "6V", "--ic", "10mA", "--ambient", ambient)
    assert result.exit_code == 2
    lines = result.output.strip().splitlines()
    assert len(lines) == 1 and "ambient" in lines[0] and "75" in lines[0]  # OC375 Tj max


@pytest.mark.parametrize("ambient", ["400", "300", "150"])
def test_bc931b_hot_ambient_is_one_clear_line(demo: str, ambient: str) -> None:
    result = run(demo, "bias", "divider", "--vcc", "9V", "--r1", "47k", "--r2", "10k", "--rc",
                 "2k2", "--re", "470", "--device", "BC931B", "--ambient", ambient)
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output
    lines = result.output.strip().splitlines()
    assert len(lines) == 1 and ambient in lines[0] and "150" in lines[0]  # BC931B Tj max


def test_given_part_at_300c_is_solved_and_labelled_from_its_currents(tmp_path: Path) -> None:
    result = CliRunner().invoke(main, [
        "bias", "divider", "--vcc", "9V", "--r1", "47k", "--r2", "10k", "--rc", "2k2", "--re",
        "470", "--polarity", "npn", "--hfe", "200", "--vbe", "0.65V", "--vbe-ic", "2mA",
        "--ambient", "573.15 K", "--format", "json"])
    assert result.exit_code == 0, result.output
    orig = json.loads(result.output)["original"]
    assert orig["ic"] > 1e-3 and orig["region"] != "cut-off"


def test_bad_ambient_text_exits_2(demo: str) -> None:
    result = run(demo, "bias", "divider", "--vcc", "9V", "--r1", "47k", "--r2", "10k", "--rc",
                 "2k2", "--re", "470", "--device", "BC931B", "--ambient", "45 V")
    assert result.exit_code == 2 and "ambient" in result.output
