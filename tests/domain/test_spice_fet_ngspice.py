"""The FET SPICE cards (partsdb.spice_fet) run in ngspice: each card must reproduce the record
values it was written from (the external oracle is ngspice's own JFET and level-1 MOSFET).

* A JFET card at Vgs = 0 in saturation carries Idss (Shockley's equation at Vgs = 0), and at
  Vgs = Vgs(off) nothing; the typical part is the geometric mean of each window (common
  practice), computed here by hand.
* A MOSFET card at its Rds(on) test drive with a small Vds (10 mV, linear region) shows the
  record's Rds(on); the body diode conducts from source to drain.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from partsdb.jfet import JfetParams
from partsdb.spice_fet import MosfetCardParams, jfet_card, mosfet_card
from tests.ngspice import run_netlist

pytestmark = pytest.mark.ngspice


def _run(tmp_path: Path, card: str, body: list[str], probe: str) -> dict[str, float]:
    lines = ["* card check", *body, card.strip(), ".control", "op", f"echo RESULT {probe}",
             "quit 0", ".endc", ".end", ""]
    return run_netlist("\n".join(lines), tmp_path)


@pytest.mark.parametrize("channel", ["n", "p"])
def test_jfet_card_carries_idss_at_zero_gate_voltage(tmp_path: Path, channel: str) -> None:
    card = jfet_card(JfetParams("XJ 1", channel, idss_min=2e-3, idss_max=8e-3, vp_min=1.0,
                                vp_max=4.0))
    sign = 1 if channel == "n" else -1
    # Typical by hand: Idss sqrt(2 x 8) = 4 mA, |Vp| sqrt(1 x 4) = 2 V.
    r = _run(tmp_path, card, [f"VD d 0 DC {10 * sign}", "VG g 0 DC 0", "J1 d g 0 XJ_1"],
             "ID=$&i(vd)")
    assert abs(r["id"]) == pytest.approx(4e-3, rel=0.02)
    r = _run(tmp_path, card, [f"VD d 0 DC {10 * sign}", f"VG g 0 DC {-2.0 * sign}",
                              "J1 d g 0 XJ_1"], "ID=$&i(vd)")
    assert abs(r["id"]) < 1e-7
    # Halfway to pinch-off Shockley gives Idss/4 = 1 mA.
    r = _run(tmp_path, card, [f"VD d 0 DC {10 * sign}", f"VG g 0 DC {-1.0 * sign}",
                              "J1 d g 0 XJ_1"], "ID=$&i(vd)")
    assert abs(r["id"]) == pytest.approx(1e-3, rel=0.02)


@pytest.mark.parametrize("channel", ["n", "p"])
def test_mosfet_card_shows_rds_on_at_its_drive(tmp_path: Path, channel: str) -> None:
    card = mosfet_card(MosfetCardParams("XM1", channel, "enhancement", vgs_th_min=2.0,
                                        vgs_th_max=4.0, rds_on=0.1, rds_on_vgs=10.0))
    assert "APPROXIMATE" in card
    sign = 1 if channel == "n" else -1
    r = _run(tmp_path, card, [f"VD d 0 DC {0.01 * sign}", f"VG g 0 DC {10 * sign}",
                              "M1 d g 0 0 XM1"], "ID=$&i(vd)")
    assert 0.01 / abs(r["id"]) == pytest.approx(0.1, rel=0.02)
    # Below the middle of the Vgs(th) window (3 V) the card is off.
    r = _run(tmp_path, card, [f"VD d 0 DC {5 * sign}", f"VG g 0 DC {2.5 * sign}",
                              "M1 d g 0 0 XM1"], "ID=$&i(vd)")
    assert abs(r["id"]) < 1e-6


def test_mosfet_card_body_diode_conducts_source_to_drain(tmp_path: Path) -> None:
    card = mosfet_card(MosfetCardParams("XM2", "n", rds_on=0.05, rds_on_vgs=10.0,
                                        vgs_th_min=2, vgs_th_max=4, body_diode=True,
                                        trr=80e-9))
    # Gate off, drain pulled 1 mA below the source: only the diode can carry it, at about
    # 0.6-0.7 V for IS 1e-14 A (Vt ln(1e-3/1e-14) = 0.655 V at 27 °C).
    r = _run(tmp_path, card, ["ID 0 d DC -1e-3", "VG g 0 DC 0", "X1 d g 0 XM2"], "VD=$&v(d)")
    assert r["vd"] == pytest.approx(-0.655, abs=0.02)
    # Reverse: 50 V on the drain, gate off: nothing flows.
    r = _run(tmp_path, card, ["VD d 0 DC 50", "VG g 0 DC 0", "X1 d g 0 XM2"], "ID=$&i(vd)")
    assert abs(r["id"]) < 1e-6


def test_depletion_card_conducts_at_zero_gate(tmp_path: Path) -> None:
    # Depletion: VTO = -|Vth| for N-channel; Rds(on) given at Vgs = 0 V.
    card = mosfet_card(MosfetCardParams("XD1", "n", "depletion", vgs_th_min=1.0,
                                        vgs_th_max=3.0, rds_on=10.0, rds_on_vgs=0.0))
    assert "VTO=-2" in card
    r = _run(tmp_path, card, ["VD d 0 DC 0.01", "VG g 0 DC 0", "M1 d g 0 0 XD1"], "ID=$&i(vd)")
    assert 0.01 / abs(r["id"]) == pytest.approx(10.0, rel=0.02)
    assert math.isfinite(r["id"])
