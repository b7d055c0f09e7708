"""Field-effect substitution: the rules, the thermal chain with Rds(on) at Tj, the checks and
the ranking, against hand calculations written out here (stand-in records, not the demo).
"""

from __future__ import annotations

import json
import math
from types import SimpleNamespace
from typing import Any

import pytest

from partsdb.derating import BUILTIN_POLICIES, MARGINAL, OK, UNDER, UNKNOWN
from partsdb.ranking.fet_checks import jfet_checks, mosfet_checks
from partsdb.ranking.fet_engine import FetRequirement, assess_fet, rank_fets
from partsdb.ranking.fet_rules import (
    implied_source_resistor,
    junction_fixed_point,
    overdrive_status,
    rds_on_at,
    self_bias_current,
    switching_loss,
    window_status,
)
from partsdb.ranking.fet_thermal import Rating, load_of, thermal
from partsdb.ranking.model import SpecError, Stress

WORKSHOP = BUILTIN_POLICIES["workshop"]


def mosfet(designation: str, **values: Any) -> SimpleNamespace:
    record: dict[str, Any] = dict(
        designation=designation, kind="mosfet", polarity="n", mode="enhancement", vds=100.0,
        vgs_max=20.0, id_max=20.0, ptot=60.0, ptot_ref="case", tj_max=175.0, rth_jc=1.0,
        rds_on=0.1, rds_on_vgs=10.0, rds_on_id=5.0, vgs_th_min=2.0, vgs_th_max=4.0, qg=30e-9,
        qgd=10e-9, ciss=1e-9, body_diode=True, trr=100e-9, vgs_off_min=None,
        vgs_off_max=None, idss_min=None, idss_max=None, yfs=None, yfs_id=None,
        package="TO-220", pinout="GDS")
    record.update(values)
    return SimpleNamespace(**record)


def jfet(designation: str, **values: Any) -> SimpleNamespace:
    record: dict[str, Any] = dict(
        designation=designation, kind="jfet", polarity="n", mode=None, vds=30.0,
        vgs_max=None, id_max=None, ptot=0.3, ptot_ref="ambient", tj_max=150.0, rth_jc=None,
        idss_min=2e-3, idss_max=8e-3, vgs_off_min=1.0, vgs_off_max=4.0, yfs=5e-3,
        yfs_id=None, ciss=5e-12, package="TO-92", pinout="DSG")
    record.update(values)
    return SimpleNamespace(**record)


# ----------------------------------------------------------------------------- the rules

@pytest.mark.parametrize(("drive", "vgs", "th", "expected"), [
    (10.0, 10.0, 4.0, OK),            # drive = the Rds(on) test voltage: rated there
    (12.0, 10.0, 4.0, OK),            # above it
    (9.99, 10.0, 4.0, MARGINAL),      # just below the test voltage, far above 2 x Vth
    (8.0, 10.0, 4.0, MARGINAL),       # exactly 2 x Vgs(th) max 4 V: still enough overdrive
    (7.99, 10.0, 4.0, UNDER),         # just under 2 x 4 V
    (5.0, 10.0, None, UNDER),         # below the test voltage, threshold not stated
    (4.5, 4.5, 2.0, OK),              # a logic-level part on a 4.5 V drive
    (None, 10.0, 4.0, UNKNOWN),
    (10.0, None, 4.0, UNKNOWN),
])
def test_overdrive_rule_boundaries(drive: float | None, vgs: float | None, th: float | None,
                                   expected: int) -> None:
    # The rule (common practice, stated in fet_rules): drive >= Rds(on) test voltage ok; below
    # it but >= 2 x Vgs(th) max marginal; below that under-rated.
    assert overdrive_status(drive, vgs, th) == expected


def test_rds_on_temperature_coefficient_by_hand() -> None:
    # (1 + 0.005)^100 = e^(100 ln 1.005) = e^(100 x 0.0049875) = e^0.49875 = 1.64667: x 1.65
    # at 125 °C, inside the x 1.5-2 datasheet curves at 125-150 °C (common practice).
    assert rds_on_at(0.1, 125.0) == pytest.approx(0.164667, rel=1e-4)
    assert rds_on_at(0.1, 25.0) == pytest.approx(0.1)


def test_junction_fixed_point_written_out_by_hand() -> None:
    # Id = 5 A, Rds(on) = 0.1 Ω at 25 °C, alpha 0.005 /K, Rth = 4 K/W, Ta = 25 °C.
    # Step 1: Tj 25 -> P = 5^2 x 0.1 = 2.5 W -> Tj = 25 + 2.5 x 4 = 35.0 °C
    # Step 2: Rds(35) = 0.1 x 1.005^10 = 0.105114 Ω -> P = 2.6279 W -> Tj = 35.511 °C
    # Step 3: Rds(35.511) = 0.1 x 1.005^10.511 = 0.105382 Ω -> P = 2.6346 W -> Tj = 35.538 °C
    # Fixed point: x = Tj - 25 solves x = 10 x 1.005^x; by calculator x = 10.540,
    # so Tj = 35.540 °C and P = 2.5 x 1.005^10.540 = 2.6349 W.
    fixed = junction_fixed_point(25.0, 4.0, 5.0, 0.1)
    assert fixed is not None
    tj, power = fixed
    assert tj == pytest.approx(35.540, abs=2e-3)
    assert power == pytest.approx(2.6349, abs=2e-4)


def test_thermal_runaway_on_both_sides_of_the_tangent() -> None:
    # Tj - Ta = x solves x = k a^x with k = I^2 R25 Rth and a = 1.005; a solution exists only
    # while k <= 1 / (e ln a) = 1 / (2.71828 x 0.0049875) = 73.76 (the line touches the
    # exponential at x = 1 / ln a = 200.5 K). k = 73 (Id 10 A, 0.1 Ω, 7.3 K/W) settles, at
    # x = 173.0 (by calculator: Tj 198.0 °C, below the search's 400 °C cut-off); k = 75 runs
    # away.
    assert junction_fixed_point(25.0, 7.3, 10.0, 0.1) is not None
    assert junction_fixed_point(25.0, 7.5, 10.0, 0.1) is None


def test_switching_loss_by_hand() -> None:
    # tr + tf = Qg / Ig = 30 nC / 0.5 A = 60 ns; P = 1/2 x 48 V x 5 A x 60 ns x 50 kHz
    # = 0.5 x 240 x 60e-9 x 5e4 = 0.36 W (estimate, common practice)
    assert switching_loss(48.0, 5.0, 30e-9, 0.5, 50e3) == pytest.approx(0.36)


@pytest.mark.parametrize(("offered", "status", "sub"), [
    ((3e-3, 5e-3), OK, 1.0),                      # inside 2..6 mA
    ((1.5e-3, 5e-3), MARGINAL, 1 - math.log(2 / 1.5) / math.log(10)),  # reaches below
    # wholly above by 7/6 (< 2): gap ln(7/6) plus the spill above ln(10/6):
    # 1 - (0.15415 + 0.51083) / 2.30259 = 0.71120
    ((7e-3, 10e-3), MARGINAL, 0.71120),
    ((13e-3, 20e-3), UNDER, None),                 # above by 13/6 > 2
    ((None, None), UNKNOWN, 0.25),
])
def test_window_on_log_scale(offered: tuple[float | None, float | None], status: int,
                             sub: float | None) -> None:
    got_status, got_sub = window_status((2e-3, 6e-3), offered)
    assert got_status == status
    if sub is not None:
        assert got_sub == pytest.approx(sub, abs=1e-4)


def test_self_bias_shift_by_hand() -> None:
    # Original: Idss 4 mA, |Vp| 2 V designed at Vgs = Vp/2, Id = Idss/4 = 1 mA, so
    # Rs = 1 V / 1 mA = 1 kΩ = 2 |Vp| / Idss.
    rs = implied_source_resistor(4e-3, 2.0)
    assert rs == pytest.approx(1000.0)
    assert self_bias_current(4e-3, 2.0, rs) == pytest.approx(1e-3)
    # Candidate Idss 8 mA, |Vp| 2 V on the same 1 kΩ: u = Id Rs / |Vp| solves
    # u = 8 mA x 1 kΩ / 2 V x (1 - u)^2 = 4 (1 - u)^2, i.e. u^2 - 2.25 u + 1 = 0:
    # u = (2.25 - sqrt(1.0625)) / 2 = 0.609612 -> Id = 0.609612 x 2 V / 1 kΩ = 1.21922 mA.
    # Check on Shockley's law: 8 mA x (1 - 1.21922/2)^2 = 8 mA x 0.152403 = 1.21922 mA.
    assert self_bias_current(8e-3, 2.0, 1000.0) == pytest.approx(1.21922e-3, rel=1e-5)


# ----------------------------------------------------------------------------- thermal chain

def test_fixed_point_through_the_thermal_chain_on_a_given_sink() -> None:
    # Rth j-c 1.0 K/W (record) + c-s 1.0 K/W (TO-220, plastic-tab class of partsdb.thermal,
    # common practice) + s-a 2.0 K/W (--heatsink) = 4.0 K/W: the hand fixed point above,
    # Tj 35.540 °C, P 2.6349 W. Allowed: (175 - 25) / 4 = 37.5 W (below Ptot 60 W), and
    # 2.6349 / 37.5 = 7 % is within workshop's 70 %: ok; Tj within 175 - 20 = 155 °C: ok.
    cand = mosfet("C1")
    stress = Stress(id_peak=5.0, heatsink=2.0)
    load, _ = load_of(cand, stress, mosfet=True)
    t = thermal(Rating.of(mosfet("O1")), Rating.of(cand), stress, WORKSHOP, load)
    assert t.tj_need == pytest.approx(35.540, abs=2e-3)
    assert t.ptot_need == pytest.approx(2.6349, abs=2e-4)
    assert t.ptot_offered == pytest.approx(37.5)
    assert (t.ptot_status, t.tj_status) == (OK, OK)


def test_heat_sink_needed_with_rds_on_at_the_tj_limit() -> None:
    # No sink given, Id 5 A: at workshop's limit Tj = 175 - 20 = 155 °C,
    # 1.005^130 = e^(130 x 0.0049875) = e^0.64838 = 1.91244, Rds(on) = 0.191244 Ω,
    # P = 25 x 0.191244 = 4.7811 W;
    # Rth s-a <= (155 - 25) / 4.7811 - 1.0 - 1.0 = 27.190 - 2 = 25.190 K/W (rounded down: 25).
    stress = Stress(id_peak=5.0)
    cand = mosfet("C1")
    load, _ = load_of(cand, stress, mosfet=True)
    t = thermal(Rating.of(mosfet("O1")), Rating.of(cand), stress, WORKSHOP, load)
    assert t.ptot_need == pytest.approx(4.7811, abs=1e-3)
    assert t.sink_needed == pytest.approx(25.190, abs=1e-3)
    assert "25 K/W or better" in t.ptot_note
    assert t.ptot_status == OK


def test_runaway_is_under_rated_in_the_checks() -> None:
    # Id 10 A on a bare TO-220 (Rth j-c 1 + 60 K/W case-to-air): k = 100 x 0.1 x 61 = 610,
    # far beyond 73.8: no fixed point.
    cand = mosfet("C1")
    a = mosfet_checks(mosfet("O1"), cand, Stress(id_peak=10.0, heatsink=float("inf")),
                      WORKSHOP)
    ptot = next(r.check for r in a.rows if r.check.parameter == "ptot")
    assert ptot.status == "under-rated"
    assert "thermal runaway" in ptot.note
    assert "thermal-runaway" in [f.code for f in a.flags]


# ----------------------------------------------------------------------------- checks

def _check(a: Any, name: str) -> Any:
    return next(r.check for r in a.rows if r.check.parameter == name)


def test_standard_gate_on_a_logic_drive_is_under_rated_and_logic_level_is_ok() -> None:
    stress = Stress(drive=5.0)
    standard = mosfet_checks(mosfet("O1"), mosfet("STD"), stress, WORKSHOP)
    logic = mosfet_checks(mosfet("O1"), mosfet("LL", rds_on_vgs=4.5, vgs_th_max=2.0), stress,
                          WORKSHOP)
    # 5 V < 10 V test voltage and < 2 x 4 V = 8 V
    assert _check(standard, "drive").status == "under-rated"
    assert _check(logic, "drive").status == "ok"
    assert _check(logic, "drive").ratio == pytest.approx(5.0 / 4.5)


def test_gate_drive_against_vgs_max_uses_the_voltage_factor() -> None:
    # 18 V drive on a 20 V Vgs max: 90 % > workshop's 80 %: marginal; 16 V = 80 %: ok
    assert _check(mosfet_checks(mosfet("O"), mosfet("C"), Stress(drive=18.0), WORKSHOP),
                  "vgs_max").status == "marginal"
    assert _check(mosfet_checks(mosfet("O"), mosfet("C"), Stress(drive=16.0), WORKSHOP),
                  "vgs_max").status == "ok"


def test_gate_charge_body_diode_and_vds_stress() -> None:
    a = mosfet_checks(mosfet("O"), mosfet("C", qg=90e-9, body_diode=False, vds=55.0),
                      Stress(vds_peak=48.0), WORKSHOP)
    qg = _check(a, "qg")
    assert qg.status == "marginal" and qg.ratio == pytest.approx(30 / 90)
    assert "3 x the original's" in qg.note
    assert "slow-gate" in [f.code for f in a.flags]
    assert _check(a, "body_diode").status == "under-rated"
    # 48 V on 55 V is 87 % > 80 %: marginal
    assert _check(a, "vds").status == "marginal"


def test_jfet_checks_say_how_far_the_stage_moves() -> None:
    orig = jfet("O", idss_min=2e-3, idss_max=8e-3, vgs_off_min=1.0, vgs_off_max=4.0)
    # original centres: Idss sqrt(2 x 8) = 4 mA, |Vp| sqrt(1 x 4) = 2 V -> Rs 1 kΩ, Id 1 mA;
    # candidate centres 8 mA and 2 V -> 1.22 mA (+22 %), see test_self_bias_shift_by_hand
    cand = jfet("C", idss_min=4e-3, idss_max=16e-3, vgs_off_min=1.0, vgs_off_max=4.0)
    idss = _check(jfet_checks(orig, cand, Stress(), WORKSHOP), "idss")
    assert idss.status == "marginal"
    assert "1.22 mA instead of 1 mA (+22%" in idss.note


# ----------------------------------------------------------------------------- ranking

def test_kind_channel_and_mode_filter() -> None:
    orig = mosfet("O")
    devices = [orig, mosfet("GOOD"), jfet("JF"), mosfet("PCH", polarity="p"),
               mosfet("DEP", mode="depletion")]
    result = rank_fets(devices, FetRequirement.from_device(orig))
    assert [c.designation for c in result.candidates] == ["GOOD"]
    assert result.compatible == 1
    shown = rank_fets(devices, FetRequirement.from_device(orig), show_rejected=True)
    reasons = {c.designation: c.flags[0].message for c in shown.candidates
               if c.verdict == "incompatible"}
    assert reasons == {"JF": "kind jfet, need mosfet", "PCH": "channel p, need n",
                       "DEP": "mode depletion, need enhancement"}
    # and a MOSFET is never offered for a JFET
    jf = jfet("J0")
    assert [c.designation for c in rank_fets([jf, mosfet("M"), jfet("J1")],
                                             FetRequirement.from_device(jf)).candidates] == ["J1"]
    assert assess_fet(mosfet("M"), FetRequirement.from_device(jf)).verdict == "incompatible"


def test_ranking_orders_by_verdict_then_score() -> None:
    orig = mosfet("O")
    devices = [orig, mosfet("LOWV", vds=40.0), mosfet("SAME"), mosfet("BETTER", rds_on=0.05)]
    result = rank_fets(devices, FetRequirement.from_device(orig),
                       Stress(vds_peak=48.0, id_peak=5.0, drive=10.0))
    names = [c.designation for c in result.candidates]
    assert names[-1] == "LOWV" and result.candidates[-1].verdict == "under-rated"
    assert names[:2] == ["BETTER", "SAME"]


def test_json_is_si_and_serialisable() -> None:
    orig = mosfet("O")
    result = rank_fets([orig, mosfet("C")], FetRequirement.from_device(orig),
                       Stress(id_peak=5.0, drive=10.0, fsw=50e3, gate_current=0.5,
                              vds_peak=48.0))
    data = json.loads(json.dumps(result.to_json()))
    assert data["stress"]["fsw"] == 50000.0 and data["stress"]["drive"] == 10.0
    assert data["requirement"]["rds_on"] == 0.1 and data["requirement"]["qg"] == 3e-08
    checks = {c["parameter"]: c for c in data["candidates"][0]["checks"]}
    assert checks["qg"]["offered"] == 3e-08  # coulombs, not nC
    assert checks["rds_on"]["need"] == 0.1    # ohms
    assert set(checks) == {"vds", "id_max", "ptot", "tj_max", "drive", "rds_on", "vgs_max",
                           "qg", "body_diode", "trr", "package", "pinout"}


def test_bad_requirement_values_are_refused() -> None:
    with pytest.raises(SpecError, match="polarity: 'npn' is not valid; expected the channel"):
        FetRequirement(kind="mosfet", polarity="npn", mode=None, original=None)
    with pytest.raises(SpecError, match="kind: 'bjt'"):
        FetRequirement(kind="bjt", polarity="n", mode=None, original=None)


def test_p_channel_threshold_is_read_as_a_magnitude() -> None:
    """A P-channel record stores Vgs(th) with its sign (device.FIELDS); the overdrive rule
    reads magnitudes: a 5 V drive against |Vgs(th) max| 2.5 V is exactly 2 x: marginal, and
    against 3 V (2 x = 6 V) under-rated."""
    from partsdb.device import parse_device

    base = {"designation": "HP-1", "kind": "mosfet", "polarity": "p", "material": "si",
            "vds": "-60V", "id_max": "-10A", "rds_on": "0.2", "rds_on_vgs": "-10V",
            "vgs_th_min": "-1V", "vgs_th_max": "-2.5V"}
    orig = parse_device(base)
    cand = parse_device({**base, "designation": "HP-2"})
    hot = parse_device({**base, "designation": "HP-3", "vgs_th_max": "-3V"})
    assert _check(mosfet_checks(orig, cand, Stress(drive=5.0), WORKSHOP),
                  "drive").status == "marginal"
    assert _check(mosfet_checks(orig, hot, Stress(drive=5.0), WORKSHOP),
                  "drive").status == "under-rated"


def test_a_fet_ranking_carries_the_fet_cautions() -> None:
    from partsdb.cautions import FET_CAUTIONS, SAFETY_CAUTIONS

    orig = mosfet("O")
    result = rank_fets([orig, mosfet("C")], FetRequirement.from_device(orig))
    assert result.cautions == (*SAFETY_CAUTIONS, *FET_CAUTIONS)


def test_unknown_rds_on_under_a_current_is_unknown_not_a_crash() -> None:
    """--id-peak with a candidate lacking Rds(on): no loss estimate, the Ptot check unknown
    (Ptot is a primary rating: the verdict is unverified)."""
    orig = mosfet("O")
    cand = mosfet("C", rds_on=None)
    stress = Stress(id_peak=5.0, heatsink=2.0)
    a = mosfet_checks(orig, cand, stress, WORKSHOP)
    assert _check(a, "ptot").status == "unknown"
    assert assess_fet(cand, FetRequirement.from_device(orig), stress).verdict == "unverified"


def test_ratings_compared_on_a_given_sink_without_a_dissipation() -> None:
    # --heatsink 2 and no dissipation: allowed powers on that sink compared.
    # original: (175 - 25) / (1 + 1 + 2) = 37.5 W; candidate with Rth j-c 3:
    # (175 - 25) / (3 + 1 + 2) = 25 W < 37.5 W: under-rated, ratio 2/3
    a = mosfet_checks(mosfet("O"), mosfet("C", rth_jc=3.0), Stress(heatsink=2.0), WORKSHOP)
    ptot = _check(a, "ptot")
    assert (ptot.need, ptot.offered) == (pytest.approx(37.5), pytest.approx(25.0))
    assert ptot.status == "under-rated" and ptot.ratio == pytest.approx(2 / 3)


@pytest.mark.parametrize("stress", [
    Stress(), Stress(vds_peak=48.0, id_peak=5.0, drive=10.0, heatsink=2.0),
    Stress(id_peak=8.0, drive=5.0, fsw=50e3, gate_current=0.5, vds_peak=60.0)])
def test_ranking_with_shared_checks_equals_each_candidate_checked_alone(stress: Stress) -> None:
    """rank_fets checks each distinct field value once per ranking (the memo); every candidate
    must come out exactly as assess_fet (no memo) checks it on its own."""
    import itertools

    orig = mosfet("O")
    values = itertools.product((60.0, 100.0, None), (0.05, 0.1, None), (4.5, 10.0),
                               (30e-9, 90e-9), (True, False), ("TO-220", "TO-247"))
    devices = [orig] + [mosfet(f"C{i:03d}", vds=vds, rds_on=rds, rds_on_vgs=vgs, qg=qg,
                               body_diode=diode, package=pkg)
                        for i, (vds, rds, vgs, qg, diode, pkg) in enumerate(values)]
    req = FetRequirement.from_device(orig)
    ranked = rank_fets(devices, req, stress, limit=len(devices))
    assert len(ranked.candidates) == len(devices) - 1
    for c in ranked.candidates:
        alone = assess_fet(next(d for d in devices if d.designation == c.designation), req,
                           stress)
        assert (c.verdict, c.score, c.checks, c.flags, c.confidence) == (
            alone.verdict, alone.score, alone.checks, alone.flags, alone.confidence)
    order = [(["suitable", "marginal", "unverified", "under-rated"].index(c.verdict), -c.score,
              c.key) for c in ranked.candidates]
    assert order == sorted(order)
