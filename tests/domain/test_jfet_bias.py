"""JFET common-source bias (partsdb.jfet) against a textbook example, hand solutions of
Shockley's quadratic and ngspice.

ngspice netlists here are written by hand from the raw window values (Idss, Vgs(off)): SPICE's
NJF/PJF is the Shichman-Hodges model, Id = BETA (Vgs - VTO)^2 in saturation with
BETA = Idss/VTO^2 (DOMAIN notes; the relation makes Id = Idss at Vgs = 0), and
Id = BETA Vds (2 (Vgs - VTO) - Vds) in the ohmic region; ngspice reads Id through a 0 V
source in the drain lead. No partsdb helper builds these netlists.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from partsdb.eseries import E12, E24
from partsdb.jfet import (
    GATE_FORWARD,
    OHMIC,
    SATURATION,
    JfetError,
    JfetParams,
    JfetStage,
    analyse_jfet_stage,
    rs_for,
    solve_jfet,
)
from tests.ngspice import run_netlist


def njf_netlist(network: str, vdd: float, rd: float, rs: float, idss: float, vp: float,
                r1: float = 0.0, r2: float = 0.0, channel: str = "n") -> str:
    """A hand-written common-source stage: NJF/PJF with VTO = -|Vp|, BETA = Idss/Vp^2."""
    beta = idss / vp**2
    sign = 1 if channel == "n" else -1
    lines = [f"* {network} JFET stage", f"VDD vdd 0 DC {sign * vdd!r}",
             f"RD vdd d {rd!r}" if rd > 0 else "VRD vdd d DC 0",
             "VMD d dq DC 0",
             f"RS s 0 {rs!r}" if rs > 0 else "VRS s 0 DC 0"]
    if network == "divider":
        lines += [f"R1 vdd g {r1!r}", f"R2 g 0 {r2!r}"]
    else:
        lines.append("RG g 0 1e6")
    lines += ["J1 dq g s JX", f".model JX {'NJF' if channel == 'n' else 'PJF'}"
              f"(VTO={-vp!r} BETA={beta!r})",
              ".control", "op", "echo RESULT ID=$&i(vmd) VG=$&v(g) VS=$&v(s) VD=$&v(d)",
              "quit 0", ".endc", ".end", ""]
    return "\n".join(lines)


def spice_point(tmp_path: Path, *args: object, **kw: object) -> tuple[float, float, float]:
    """(Id magnitude, Vgs, Vds) from ngspice, signed as the circuit has them."""
    r = run_netlist(njf_netlist(*args, **kw), tmp_path)  # type: ignore[arg-type]
    return abs(r["id"]), r["vg"] - r["vs"], r["vd"] - r["vs"]


def test_textbook_self_bias_example() -> None:
    # Boylestad & Nashelsky, Electronic Devices and Circuit Theory, FET biasing chapter,
    # self-bias example (from memory): Idss = 8 mA, Vp = -6 V, Rs = 1 kOhm, VDD = 20 V,
    # RD = 3.3 kOhm; the book's graphical answer Id about 2.6 mA, Vgs about -2.6 V.
    # Hand solution: Vgs = -Id Rs in Id = Idss (1 - Vgs/Vp)^2 gives, with Id in mA and Rs = 1k,
    #   Id = 8 (1 - Id/6)^2 = 8 (1 - Id/3 + Id^2/36)  =>  (8/36) Id^2 - (8/3 + 1) Id + 8 = 0
    #   => 2 Id^2 - 33 Id + 72 = 0  =>  Id = (33 +- sqrt(1089 - 576))/4 = (33 +- 22.6495)/4
    #   roots 2.5876 mA (Vgs = -2.5876 V, above Vp: physical) and 13.912 mA (Vgs = -13.9 V,
    #   below pinch-off: rejected). Vds = 20 - 2.5876 mA x 4.3k = 8.873 V.
    p = solve_jfet(JfetStage("self", vdd=20, rd=3300, rs=1000), idss=8e-3, vp=6.0)
    assert p.id == pytest.approx((33 - math.sqrt(513)) / 4 * 1e-3, rel=1e-9)
    assert p.vgs == pytest.approx(-(33 - math.sqrt(513)) / 4, rel=1e-9)
    assert p.vds == pytest.approx(20 - 4.3 * (33 - math.sqrt(513)) / 4, rel=1e-9)
    assert p.region == SATURATION
    assert p.id == pytest.approx(2.6e-3, abs=0.05e-3)  # the book's reading, to its precision


def test_textbook_divider_example() -> None:
    # Boylestad & Nashelsky, same chapter, voltage-divider bias example (from memory):
    # VDD = 16 V, R1 = 2.1 MOhm, R2 = 270 kOhm, RD = 2.4 kOhm, RS = 1.5 kOhm, Idss = 8 mA,
    # Vp = -4 V; the book reads Id about 2.4 mA, Vgs about -1.8 V.
    # Hand: VG = 16 x 270/2370 = 1.8228 V; Vgs = VG - 1.5 Id (mA); Id = 8 (1 - Vgs/(-4))^2
    #   = 8 (1 + (1.8228 - 1.5 Id)/4)^2 = 8 (1.45570 - 0.375 Id)^2
    #   => 1.125 Id^2 - (2 x 8 x 1.45570 x 0.375 + 1) Id + 8 x 1.45570^2 = 0
    #   => 1.125 Id^2 - 9.73418 Id + 16.95258 = 0 => Id = (9.73418 - sqrt(94.7543 - 76.2866))/2.25
    #   = (9.73418 - 4.29741)/2.25 = 2.4163 mA; Vgs = 1.8228 - 3.6245 = -1.8017 V.
    p = solve_jfet(JfetStage("divider", vdd=16, rd=2400, rs=1500, r1=2.1e6, r2=270e3),
                   idss=8e-3, vp=4.0)
    assert p.id == pytest.approx(2.4163e-3, rel=2e-4)
    assert p.vgs == pytest.approx(-1.8017, rel=2e-4)
    assert p.region == SATURATION


NGSPICE_CASES = [
    # (network, vdd, rd, rs, idss, vp, r1, r2): saturation, ohmic and a grounded source
    ("self", 20.0, 3300.0, 1000.0, 8e-3, 6.0, 0.0, 0.0),
    ("self", 15.0, 1500.0, 330.0, 2e-3, 0.8, 0.0, 0.0),
    ("self", 12.0, 2200.0, 0.0, 5e-3, 3.0, 0.0, 0.0),
    ("divider", 16.0, 2400.0, 1500.0, 8e-3, 4.0, 2.1e6, 270e3),
    ("divider", 24.0, 4700.0, 2200.0, 12e-3, 2.5, 1e6, 220e3),
    ("self", 20.0, 6000.0, 1000.0, 8e-3, 6.0, 0.0, 0.0),  # ohmic: Vds below Vgs - Vp
]


@pytest.mark.ngspice
@pytest.mark.parametrize("case", NGSPICE_CASES)
@pytest.mark.parametrize("channel", ["n", "p"])
def test_operating_point_matches_ngspice(tmp_path: Path, case: tuple, channel: str) -> None:
    network, vdd, rd, rs, idss, vp, r1, r2 = case
    stage = JfetStage(network, vdd, rd, rs, r1 or None, r2 or None)
    ours = solve_jfet(stage, idss, vp, channel)
    i_d, vgs, vds = spice_point(tmp_path, network, vdd, rd, rs, idss, vp, r1, r2, channel)
    assert ours.id == pytest.approx(i_d, rel=0.02)
    assert ours.vgs == pytest.approx(vgs, rel=0.02, abs=1e-3)  # 1 mV: gate leakage in RG
    assert ours.vds == pytest.approx(vds, rel=0.02)


def test_region_is_reported() -> None:
    # Hand: Rd = 6k, Rs = 1k, Vdd = 20, Idss 8 mA, Vp -6: the saturation root is
    # Id = 2.5876 mA, Vgs = -2.5876 V, so Vds would be 20 - 7 k x 2.5876 mA = 1.887 V, below
    # Vgs - Vp = 3.412 V: the pinch-off assumption fails (ohmic).
    assert solve_jfet(JfetStage("self", 20, 6000, 1000), 8e-3, 6.0).region == OHMIC
    # A divider putting 5 V on the gate with Rs = 100 ohm cannot hold Vgs below 0:
    # even Idss (8 mA) only drops 0.8 V on Rs.
    forward = solve_jfet(JfetStage("divider", 20, 1000, 100, 100e3, 33e3), 8e-3, 4.0)
    assert forward.region == GATE_FORWARD


def test_p_channel_is_the_mirror_image() -> None:
    n = solve_jfet(JfetStage("self", 15, 2200, 470), 6e-3, 3.0, "n")
    p = solve_jfet(JfetStage("self", 15, 2200, 470), 6e-3, 3.0, "p")
    assert p.id == n.id and p.vgs == -n.vgs and p.vds == -n.vds
    assert n.vgs < 0 < n.vds


WIDE = JfetParams("JA", "n", idss_min=2e-3, idss_max=20e-3, vp_min=0.5, vp_max=8.0)
NARROW = JfetParams("JB", "n", idss_min=6e-3, idss_max=10e-3, vp_min=2.0, vp_max=4.0)


def test_corners_bound_the_window() -> None:
    stage = JfetStage("self", 20, 2200, 680)
    r = analyse_jfet_stage(stage, WIDE).original
    # typical = geometric means: sqrt(2 x 20) mA = 6.3246 mA, sqrt(0.5 x 8) V = 2 V
    assert (r.typ.idss, r.typ.vp) == pytest.approx((math.sqrt(40) * 1e-3, 2.0))
    assert (r.low.idss, r.low.vp) == (2e-3, 0.5)
    assert (r.high.idss, r.high.vp) == (20e-3, 8.0)
    assert r.low.id < r.typ.id < r.high.id
    # The uncorrelated corners fall inside the correlated ones (saturation).
    for idss, vp in ((2e-3, 8.0), (20e-3, 0.5)):
        assert r.low.id <= solve_jfet(stage, idss, vp).id <= r.high.id


@pytest.mark.ngspice
def test_rs_fix_restores_the_drain_current_in_ngspice(tmp_path: Path) -> None:
    stage = JfetStage("self", 20, 2200, 680)
    report = analyse_jfet_stage(stage, NARROW, WIDE)
    fix = report.fix
    assert fix is not None
    # Original's typical Id from ngspice, raw window values: Idss sqrt(60) mA, Vp sqrt(8) V.
    target, _, _ = spice_point(tmp_path, "self", 20.0, 2200.0, 680.0, math.sqrt(60e-6),
                               math.sqrt(8.0))
    assert fix.target_id == pytest.approx(target, rel=0.02)
    # The substitute (typical: sqrt(40) mA, 2 V) with the exact Rs, in ngspice.
    got, _, _ = spice_point(tmp_path, "self", 20.0, 2200.0, fix.exact, math.sqrt(40e-6), 2.0)
    assert got == pytest.approx(target, rel=0.02)
    # The preferred values are the series' nearest (log scale), each with its own Id.
    for option, series in ((fix.e12, E12), (fix.e24, E24)):
        mantissa = option.value / 10 ** math.floor(math.log10(option.value))
        assert any(math.isclose(mantissa, m) for m in series)
        assert abs(math.log(option.value / fix.exact)) <= math.log(1.23) / 2 + 1e-9
        got, _, _ = spice_point(tmp_path, "self", 20.0, 2200.0, option.value,
                                math.sqrt(40e-6), 2.0)
        assert option.id == pytest.approx(got, rel=0.02)


def test_rs_fix_by_hand() -> None:
    # Hand: target 2 mA with Idss 8 mA, Vp -4 V in self bias: 2 = 8 (1 + Vgs/4)^2 gives
    # 1 + Vgs/4 = 0.5, Vgs = -2 V, so Rs = 2 V / 2 mA = 1 kOhm.
    assert rs_for(JfetStage("self", 20, 1000, 470), 2e-3, 8e-3, 4.0) == pytest.approx(1000)
    # Id at or above Idss needs Vgs >= 0 with the gate at 0 V: no resistor does it.
    assert rs_for(JfetStage("self", 20, 1000, 470), 9e-3, 8e-3, 4.0) is None


def test_no_fix_when_the_substitute_cannot_reach_the_current() -> None:
    low = JfetParams("JL", "n", idss_min=1e-3, idss_max=1.5e-3, vp_min=0.5, vp_max=1.0)
    report = analyse_jfet_stage(JfetStage("self", 20, 2200, 100), NARROW, low)
    assert report.fix is None
    assert any("no source resistor" in n for n in report.notes)


@pytest.mark.parametrize(("kwargs", "field"), [
    ({"network": "self", "vdd": 20, "rd": -1, "rs": 100}, "rd"),
    ({"network": "self", "vdd": 20, "rd": 1000, "rs": -100}, "rs"),
    ({"network": "self", "vdd": 0, "rd": 1000, "rs": 100}, "vdd"),
    ({"network": "self", "vdd": math.nan, "rd": 1000, "rs": 100}, "vdd"),
    ({"network": "divider", "vdd": 20, "rd": 1000, "rs": 100, "r1": 1e6}, "r2"),
    ({"network": "self", "vdd": 20, "rd": 1000, "rs": 100, "r1": 1e6}, "r1"),
    ({"network": "bridge", "vdd": 20, "rd": 1000, "rs": 100}, "network"),
])
def test_bad_stage_is_refused_with_the_field_named(kwargs: dict, field: str) -> None:
    with pytest.raises(JfetError) as err:
        JfetStage(**kwargs)
    assert str(err.value).startswith(f"{field}:") and "\n" not in str(err.value)


def test_rs_zero_is_a_valid_stage() -> None:
    # A grounded source: Vgs = 0, so Id = Idss (Shockley at Vgs = 0).
    assert solve_jfet(JfetStage("self", 20, 1000, 0.0), 8e-3, 4.0).id == pytest.approx(8e-3)


def test_substitute_of_the_other_channel_is_refused() -> None:
    other = JfetParams("JP", "p", idss_min=2e-3, idss_max=8e-3, vp_min=1.0, vp_max=4.0)
    with pytest.raises(JfetError, match="substitute"):
        analyse_jfet_stage(JfetStage("self", 20, 2200, 680), NARROW, other)
