"""CLI: the FET circuit checks (check for a MOSFET, bias jfet-self / jfet-divider, spice for
FETs) invoked like a user would. Figures are checked against hand solutions written here
(Boylestad & Nashelsky's self-bias example, from memory; the thermal sum of
tests/domain/test_mosfet_loss.py), never against the code's own output."""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from click.testing import CliRunner, Result

from partsdb.cli import main
from partsdb.device import Device

# Invented parts. JFET windows chosen so the typical part is the textbook one: Idss
# sqrt(4 x 16) = 8 mA, |Vgs(off)| sqrt(3 x 12) = 6 V.
JN = Device("XJ10", kind="jfet", polarity="n", idss_min=4e-3, idss_max=16e-3,
            vgs_off_min=-3.0, vgs_off_max=-12.0, vds=30.0, ptot=0.3, ptot_ref="ambient")
JN2 = Device("XJ20", kind="jfet", polarity="n", idss_min=2e-3, idss_max=8e-3,
             vgs_off_min=-1.0, vgs_off_max=-4.0, vds=30.0)
JP = Device("XJ30", kind="jfet", polarity="p", idss_min=4e-3, idss_max=16e-3,
            vgs_off_min=3.0, vgs_off_max=12.0, vds=-30.0)
MN = Device("XM100", kind="mosfet", mode="enhancement", polarity="n", vds=100.0,
            vgs_max=20.0, id_max=20.0, ptot=100.0, ptot_ref="case", tj_max=175.0,
            rth_jc=1.0, rds_on=0.1, rds_on_vgs=10.0, vgs_th_min=2.0, vgs_th_max=4.0,
            qg=50e-9, body_diode=True, package="TO-220")
BJT = Device("XK101", polarity="npn", material="si", vceo=45.0, ic_max=0.1, ptot=0.5,
             ptot_ref="ambient", tj_max=150.0, hfe_min=100, hfe_max=300)


@pytest.fixture
def db(tmp_path: Path) -> str:
    from partsdb.services import catalog
    from partsdb.storage.database import open_database

    url = f"sqlite:///{tmp_path / 'fets.sqlite'}"
    database = open_database(url, notify=None)
    with database.session() as session:
        for device in (JN, JN2, JP, MN, BJT):
            catalog.add_device(session, device)
    database.dispose()
    return url


def run(db: str, *args: str) -> Result:
    return CliRunner().invoke(main, ["--db", db, "-q", *args])


def test_jfet_self_bias_json_is_the_textbook_point(db: str) -> None:
    # Boylestad & Nashelsky (from memory): Idss 8 mA, Vp -6 V, Rs 1k, VDD 20 V, RD 3.3k:
    # hand root of 2 Id^2 - 33 Id + 72 = 0 (Id in mA): Id = (33 - sqrt(513))/4 = 2.5876 mA.
    r = run(db, "bias", "jfet-self", "--vdd", "20V", "--rd", "3k3", "--rs", "1k",
            "--device", "XJ10", "--format", "json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    hand = (33 - math.sqrt(513)) / 4
    assert data["original"]["id"] == pytest.approx(hand * 1e-3, rel=1e-6)
    assert data["original"]["vgs"] == pytest.approx(-hand, rel=1e-6)
    assert data["original"]["vds"] == pytest.approx(20 - 4.3 * hand, rel=1e-6)
    assert data["original"]["region"] == "saturation"
    assert "correlate" in data["notes"][0]


def test_jfet_table_shows_the_caution(db: str) -> None:
    r = run(db, "bias", "jfet-self", "--vdd", "20V", "--rd", "3k3", "--rs", "1k",
            "--device", "XJ10")
    assert r.exit_code == 0, r.output
    from partsdb.cautions import SHORT_CAUTION

    assert SHORT_CAUTION.splitlines()[0] in r.output


def test_p_channel_stage_takes_a_negative_supply(db: str) -> None:
    r = run(db, "bias", "jfet-self", "--vdd", "-20V", "--rd", "3k3", "--rs", "1k",
            "--device", "XJ30", "--format", "json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)["original"]
    hand = (33 - math.sqrt(513)) / 4  # the mirror image of the textbook stage
    assert data["vgs"] == pytest.approx(hand, rel=1e-6)
    assert data["vds"] == pytest.approx(-(20 - 4.3 * hand), rel=1e-6)


def test_jfet_divider_swap_gives_the_fix(db: str) -> None:
    r = run(db, "bias", "jfet-divider", "--vdd", "16V", "--r1", "2M1", "--r2", "270k",
            "--rd", "2k4", "--rs", "1k5", "--device", "XJ10", "--substitute", "XJ20",
            "--format", "json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    fix = data["fix"]
    # Hand: the substitute's typical part is Idss 4 mA, |Vp| 2 V; to carry the original's Id
    # it needs Vgs = 2 sqrt(Id/4 mA) - 2 and Rs = (VG - Vgs)/Id, VG = 16 x 270/2370.
    target = data["original"]["id"]
    vgs = 2 * math.sqrt(target / 4e-3) - 2
    assert fix["exact"] == pytest.approx((16 * 270 / 2370 - vgs) / target, rel=1e-9)
    e12 = [v * 10**d for v in (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)
           for d in (2, 3, 4)]  # IEC 60063 E12
    assert any(math.isclose(fix["e12"]["value"], v) for v in e12)
    assert set(fix["e24"]) >= {"value", "id", "vgs", "id_corner_low", "id_corner_high"}


def test_mosfet_check_json_by_hand(db: str) -> None:
    # Hand (see tests/domain/test_mosfet_loss.py): 5 A, 0.1 ohm, 1 + 0.5 + 3 K/W at 40 °C
    # settles at Tj 52.931 °C, P 2.8737 W.
    r = run(db, "check", "XM100", "--vds", "48V", "--id", "5A", "--drive", "10V",
            "--ambient", "40", "--heatsink", "3", "--case-to-sink", "0.5", "--format", "json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    assert data["tj_estimate"] == pytest.approx(52.931, abs=0.002)
    assert data["losses"]["total"] == pytest.approx(2.8737, abs=2e-4)
    assert data["status"] == "ok"


def test_spice_cards_for_fets(db: str) -> None:
    r = run(db, "spice", "XJ10")
    assert r.exit_code == 0, r.output
    # BETA = Idss/Vp^2 = 8 mA / 36 V^2 = 2.2222e-4
    assert ".model XJ10 NJF(VTO=-6 BETA=2.222222e-04)" in r.output
    r = run(db, "spice", "XM100")
    assert r.exit_code == 0, r.output
    # KP = 1/(0.1 x (10 - 3)) = 1.428571
    assert "NMOS(LEVEL=1 VTO=3 KP=1.428571e+00)" in r.output and ".subckt XM100" in r.output


BAD = [
    (["bias", "jfet-self", "--vdd", "20V", "--rd", "3k3", "--rs", "-1k", "--device", "XJ10"],
     "rs"),
    (["bias", "jfet-self", "--vdd", "-20V", "--rd", "3k3", "--rs", "1k", "--device", "XJ10"],
     "--vdd"),
    (["bias", "jfet-self", "--vdd", "20V", "--rd", "3k3", "--rs", "1k", "--device", "XK101"],
     "device"),
    (["bias", "jfet-self", "--vdd", "20V", "--rd", "3k3", "--rs", "1k", "--device", "XM100"],
     "device"),
    (["bias", "jfet-self", "--vdd", "20V", "--rd", "3k3", "--rs", "1k", "--device", "XJ10",
      "--substitute", "XJ30"], "substitute"),
    (["bias", "jfet-self", "--vdd", "20V", "--rd", "3k3", "--device", "XJ10"], "--rs"),
    (["bias", "jfet-self", "--vcc", "20V", "--rd", "3k3", "--rs", "1k", "--device", "XJ10"],
     "--vcc"),
    (["bias", "divider", "--vdd", "20V", "--rc", "3k3", "--re", "1k", "--r1", "10k",
      "--r2", "2k", "--device", "XK101"], "--vdd"),
    (["check", "XM100", "--vce", "10V", "--ic", "1A"], "--vce"),
    (["check", "XM100", "--vds", "48V", "--id", "5A"], "--drive"),
    (["check", "XJ10", "--vds", "10V", "--id", "1mA", "--drive", "0V"], "not a bipolar part"),
    (["check", "XK101", "--vds", "10V", "--id", "1mA", "--drive", "5V"], "device"),
    (["check", "XM100", "--vds", "48V", "--id", "5A", "--drive", "10V", "--fsw", "100kHz"],
     "gate_current"),
    (["check", "XM100", "--vds", "48V", "--id", "5A", "--drive", "-10V"], "--drive"),
]


@pytest.mark.parametrize(("args", "field"), BAD)
def test_bad_input_is_one_line_exit_2(db: str, args: list[str], field: str) -> None:
    r = run(db, *args)
    assert r.exit_code == 2, r.output
    err = r.stderr.strip()
    assert len(err.splitlines()) == 1 and "Traceback" not in r.output, err
    assert field in err, err


@pytest.fixture
def demo(demo_db) -> str:  # type: ignore[no-untyped-def]
    return str(demo_db.url)


@pytest.mark.ngspice
def test_demo_jfet_swap_fix_holds_in_ngspice(demo: str, tmp_path: Path) -> None:
    # The demo's mic-preamp JFET 2SK8170 (Idss 2.6..6.5 mA, Vgs(off) -0.4..-1.5 V) replaced by
    # the low-Idss rank 2SK8171 (1.2..3.0 mA, -0.2..-0.8 V) in a self-bias stage. The records
    # are only inputs: the oracle is ngspice with NJF cards written here from the raw windows
    # (typical = geometric means, BETA = Idss/Vp^2).
    from tests.domain.test_jfet_bias import spice_point

    r = run(demo, "bias", "jfet-self", "--vdd", "15V", "--rd", "2k2", "--rs", "220",
            "--device", "2SK8170", "--substitute", "2SK8171", "--format", "json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    orig_idss, orig_vp = math.sqrt(2.6e-3 * 6.5e-3), math.sqrt(0.4 * 1.5)
    sub_idss, sub_vp = math.sqrt(1.2e-3 * 3.0e-3), math.sqrt(0.2 * 0.8)
    want, _, _ = spice_point(tmp_path, "self", 15.0, 2200.0, 220.0, orig_idss, orig_vp)
    assert data["original"]["id"] == pytest.approx(want, rel=0.02)
    before, _, _ = spice_point(tmp_path, "self", 15.0, 2200.0, 220.0, sub_idss, sub_vp)
    assert data["substitute"]["id"] == pytest.approx(before, rel=0.02)
    fix = data["fix"]
    after, _, _ = spice_point(tmp_path, "self", 15.0, 2200.0, fix["exact"], sub_idss, sub_vp)
    assert after == pytest.approx(want, rel=0.02)
    for series in ("e12", "e24"):
        got, _, _ = spice_point(tmp_path, "self", 15.0, 2200.0, fix[series]["value"],
                                sub_idss, sub_vp)
        assert fix[series]["id"] == pytest.approx(got, rel=0.02)


def test_demo_mosfet_check_by_hand(demo: str) -> None:
    # Demo 2SK8610: Rds(on) 0.15 ohm at 10 V, Rth j-c 1.0 K/W, Tj max 150, TO-220 (records
    # are only inputs). 4 A on a 2 K/W sink with 0.5 K/W mounting at 30 °C:
    #   Rth = 1 + 0.5 + 2 = 3.5 K/W; P(25 °C) = 16 x 0.15 = 2.4 W;
    #   Tj = 30 + 8.4 x 1.005^(Tj - 25): 30 -> 38.612 -> 38.990 -> 39.007 -> 39.008 (steady:
    #   1.005^14.008 = exp(14.008 x 0.0049875) = exp(0.069865) = 1.07236, x 8.4 = 9.008).
    r = run(demo, "check", "2SK8610", "--vds", "150V", "--id", "4A", "--drive", "10V",
            "--ambient", "30", "--heatsink", "2", "--case-to-sink", "0.5", "--format", "json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    assert data["rth_total"] == pytest.approx(3.5)
    assert data["tj_estimate"] == pytest.approx(39.008, abs=0.01)


def test_demo_p_channel_mosfet_takes_signed_values(demo: str) -> None:
    # Demo 2SJ8205 (P-channel): Rds(on) 0.2 ohm at -10 V, Rth j-c 3.1 K/W. 3 A on a 5 K/W sink
    # with 0.5 K/W mounting at 25 °C, by hand: Rth = 3.1 + 0.5 + 5 = 8.6 K/W; P(25 °C) =
    # 9 x 0.2 = 1.8 W; Tj = 25 + 15.48 x 1.005^(Tj - 25): 25 -> 40.480 -> 41.723 -> 41.826
    # -> 41.835 -> 41.836 (1.005^16.836 = exp(0.083970) = 1.08760, x 15.48 = 16.836).
    signed = run(demo, "check", "2SJ8205", "--vds", "-30V", "--id", "-3A", "--drive", "-10V",
                 "--heatsink", "5", "--case-to-sink", "0.5", "--format", "json")
    plain = run(demo, "check", "2SJ8205", "--vds", "30V", "--id", "3A", "--drive", "10V",
                "--heatsink", "5", "--case-to-sink", "0.5", "--format", "json")
    assert signed.exit_code == 0 and plain.exit_code == 0, signed.output + plain.output
    assert json.loads(signed.output)["tj_estimate"] == pytest.approx(41.836, abs=0.005)
    assert json.loads(plain.output)["tj_estimate"] == json.loads(signed.output)["tj_estimate"]
