"""MOSFET losses, junction temperature and heat sink (partsdb.mosfet_loss), each against a
thermal sum worked out by hand here, step by step.

Sources of the rules: Tj = Ta + P Rth(total) and the sink formula Rth s-a = (Tj - Ta)/P -
Rth j-c - Rth c-s are standard datasheet practice (DOMAIN notes, heat sinks); Rds(on) rising
0.5 %/K compounding and the switching estimate 1/2 V I (tr + tf) fsw with tr + tf = Qg/Igate
are common practice (DOMAIN notes, power MOSFET). The workshop policy keeps Tj 20 K below Tj
max (partsdb.derating, common practice).
"""

from __future__ import annotations

import math

import pytest

from partsdb.mosfet_loss import (
    MosfetCheckError,
    MosfetParams,
    MosfetPoint,
    check_mosfet,
    rds_at_drive,
)

# An invented TO-220 part: 100 V, 20 A, Rds(on) 0.1 ohm at 10 V, Rth j-c 1 K/W, Tj max 175.
PART = MosfetParams("XM100", "n", vds_max=100, vgs_max=20, id_max=20, ptot=100,
                    ptot_ref="case", tj_max=175, rth_jc=1.0, rds_on=0.1, rds_on_vgs=10,
                    vgs_th_max=4.0, qg=50e-9, package="TO-220")


def limit(result: object, name: str) -> object:
    return next(lim for lim in result.limits if lim.parameter == name)  # type: ignore[attr-defined]


def test_conduction_only_on_a_heat_sink_by_hand() -> None:
    # Step by step: Id 5 A, drive 10 V (= the Rds(on) test drive), ambient 40 °C, sink 3 K/W,
    # case-to-sink 0.5 K/W.
    #   Rth total = 1.0 + 0.5 + 3.0 = 4.5 K/W
    #   P at 25 °C = 5^2 x 0.1 = 2.5 W
    #   Tj = 40 + 4.5 x 2.5 x 1.005^(Tj - 25) = 40 + 11.25 x 1.005^(Tj - 25); iterate:
    #     Tj0 = 40 -> 40 + 11.25 x 1.005^15    = 40 + 11.25 x 1.07768 = 52.124
    #     -> 1.005^27.124 = exp(27.124 x 0.0049875) = 1.14486 -> 52.880
    #     -> 1.005^27.880 = 1.14918 -> 52.928;  -> 1.005^27.928 = 1.14946 -> 52.931 (steady)
    #   P(Tj) = 2.5 x 1.14946 = 2.8737 W; power allowed through the chain
    #   (175 - 40)/4.5 = 30 W.
    r = check_mosfet(PART, MosfetPoint(vds=48, id=5, drive=10, ambient=40, heatsink=3,
                                       case_to_sink=0.5))
    assert r.rth_total == pytest.approx(4.5)
    assert r.tj_estimate == pytest.approx(52.931, abs=0.002)
    assert r.power == pytest.approx(2.8737, abs=2e-4)
    assert r.p_allowed == pytest.approx(30.0)
    assert r.rds_on_tj == pytest.approx(0.114946, rel=1e-4)
    assert r.worst == "ok"


def test_switching_loss_and_heat_sink_needed_by_hand() -> None:
    # Add fsw 100 kHz with a 0.5 A gate driver:
    #   tr + tf = Qg/Igate = 50 nC / 0.5 A = 100 ns
    #   Psw = 1/2 x 48 V x 5 A x 100 ns x 100 kHz = 0.5 x 48 x 5 x 0.01 = 1.2 W
    #   Tj = 40 + 4.5 x (2.5 x 1.005^(Tj - 25) + 1.2): from 40: 40 + 4.5 x 3.8942 = 57.524;
    #   -> 2.5 x 1.005^32.524 = 2.5 x 1.17616 = 2.9404, +1.2 = 4.1404 -> 58.632;
    #   -> 2.5 x 1.005^33.632 = 2.9566 -> 4.1566 -> 58.705; -> 58.710 (steady)
    # Heat sink needed at the workshop limit Tj = 175 - 20 = 155 °C:
    #   P(155) = 2.5 x 1.005^130 + 1.2 = 2.5 x 1.91242 + 1.2 = 5.9811 W
    #   Rth s-a = (155 - 40)/5.9811 - 1.0 - 0.5 = 19.2272 - 1.5 = 17.727 K/W -> 17 (rounded
    #   down to two significant digits; 17.7 < 60 K/W of a bare TO-220 in free air, so a
    #   sink is needed).
    r = check_mosfet(PART, MosfetPoint(vds=48, id=5, drive=10, fsw=100e3, gate_current=0.5,
                                       ambient=40, heatsink=3, case_to_sink=0.5))
    assert r.switching_time == pytest.approx(100e-9)
    assert r.switching == pytest.approx(1.2)
    assert r.tj_estimate == pytest.approx(58.710, abs=0.01)
    assert r.heatsink_needed == 17.0
    assert "17 K/W" in (r.heatsink_verdict or "")


def test_weak_drive_scales_rds_on_by_hand() -> None:
    # Level-1 linear region: Rds proportional to 1/(Vgs - Vt). Drive 6 V, Vt 4 V (Vgs(th)
    # max), spec 0.1 ohm at 10 V: 0.1 x (10 - 4)/(6 - 4) = 0.3 ohm.
    rds, note = rds_at_drive(0.1, 10.0, 4.0, 6.0)
    assert rds == pytest.approx(0.3)
    assert note
    # A stronger drive is not credited; at or below the threshold the part may stay off.
    assert rds_at_drive(0.1, 10.0, 4.0, 12.0) == (0.1, None)
    assert rds_at_drive(0.1, 10.0, 4.0, 4.0)[0] is None
    r = check_mosfet(PART, MosfetPoint(vds=48, id=5, drive=3.5, ambient=25, heatsink=3))
    assert limit(r, "vgs").status == "under-rated"  # type: ignore[attr-defined]
    assert limit(r, "tj").status == "unknown"  # type: ignore[attr-defined]


def test_free_air_rating_gives_rth_ja_and_credits_no_sink() -> None:
    # A small part rated 0.4 W in free air, Tj max 150: Rth j-a = (150 - 25)/0.4 = 312.5 K/W.
    # 0.2 A through 2 ohm: 0.08 W at 25 °C. Tj = 25 + 312.5 x 0.08 x 1.005^(Tj - 25):
    #   25 -> 50 -> 25 + 25 x 1.005^25 = 25 + 25 x 1.13280 = 53.320 -> 25 + 25 x 1.15170
    #   = 53.793 -> 25 + 25 x 1.15441 = 53.860 -> 53.870 -> 53.872; check the fixed point:
    #   1.005^28.872 = exp(28.872 x 0.0049875) = exp(0.144000) = 1.154884, x 25 = 28.872.
    small = MosfetParams("XS1", "n", vds_max=60, id_max=0.3, ptot=0.4, ptot_ref="ambient",
                         tj_max=150, rds_on=2.0, rds_on_vgs=10)
    r = check_mosfet(small, MosfetPoint(vds=30, id=0.2, drive=10, ambient=25, heatsink=5))
    assert r.rth_total == pytest.approx(312.5)
    assert r.tj_estimate == pytest.approx(53.872, abs=0.002)
    assert any("not credited" in n for n in r.notes)
    assert r.heatsink_needed is None


def test_thermal_runaway_is_reported() -> None:
    # 15 A through 0.1 ohm = 22.5 W at 25 °C, in free air on a TO-220 (1 + 60 = 61 K/W):
    # the fixed point would need Tj = 40 + 61 x 22.5 x ... > 1400 °C; the loss keeps growing
    # with Tj (d/dTj of 61 x 22.5 x 1.005^x alone is 6.9 K/K at 25 °C): no steady Tj.
    r = check_mosfet(PART, MosfetPoint(vds=48, id=15, drive=10, ambient=40))
    assert r.tj_estimate is None
    assert limit(r, "tj").status == "under-rated"  # type: ignore[attr-defined]
    assert any("runaway" in n for n in r.notes)


def test_no_sink_enough() -> None:
    # 18 A: P(155) = 324 x 0.1 x 1.91242 = 61.96 W; (155 - 40)/61.96 = 1.856 K/W, minus
    # Rth j-c 1.0 and case-to-sink 0.5 leaves 0.356 K/W: a sink is still possible. At 20 A,
    # P(155) = 76.50 W: 115/76.50 = 1.503 - 1.5 = 0.003 K/W. At 21 A: 84.34 W: 1.364 < 1.5.
    r = check_mosfet(PART, MosfetPoint(vds=48, id=21, drive=10, ambient=40, heatsink=0.1,
                                       case_to_sink=0.5))
    assert r.heatsink_verdict == "no heat sink is enough"
    r = check_mosfet(PART, MosfetPoint(vds=48, id=18, drive=10, ambient=40, heatsink=0.1,
                                       case_to_sink=0.5))
    assert r.heatsink_needed == pytest.approx(0.35)


@pytest.mark.parametrize(("kwargs", "field"), [
    ({"vds": -1, "id": 1, "drive": 10}, "vds"),
    ({"vds": 10, "id": math.inf, "drive": 10}, "id"),
    ({"vds": 10, "id": 1, "drive": 0}, "drive"),
    ({"vds": 10, "id": 1, "drive": 10, "fsw": 1e5}, "gate_current"),
    ({"vds": 10, "id": 1, "drive": 10, "heatsink": -2}, "heatsink"),
])
def test_bad_point_is_refused_with_the_field_named(kwargs: dict, field: str) -> None:
    with pytest.raises(MosfetCheckError) as err:
        MosfetPoint(**kwargs)
    assert str(err.value).startswith(f"{field}:")


def test_ambient_at_tj_max_is_refused() -> None:
    with pytest.raises(MosfetCheckError, match="ambient"):
        check_mosfet(PART, MosfetPoint(vds=10, id=1, drive=10, ambient=175))


def test_p_channel_record_is_read_by_magnitude() -> None:
    # A P-channel record stores its threshold signed (-2 .. -4 V); the worse part is the
    # larger magnitude, 4 V. Drive 6 V: Rds = 0.2 x (10 - 4)/(6 - 4) = 0.6 ohm (hand).
    from types import SimpleNamespace

    from partsdb.mosfet_loss import params_from_record

    record = SimpleNamespace(designation="XP1", polarity="p", vds=60.0, vgs_max=20.0,
                             id_max=5.0, id_max_ref=None, ptot=2.0, ptot_ref="ambient",
                             tj_max=150.0, rth_jc=None, rds_on=0.2, rds_on_vgs=10.0,
                             vgs_th_min=-2.0, vgs_th_max=-4.0, qg=None, package="SO-8")
    params = params_from_record(record)
    assert params.vgs_th_max == 4.0
    r = check_mosfet(params, MosfetPoint(vds=30, id=1, drive=6, ambient=25))
    assert r.rds_on_drive == pytest.approx(0.6)
