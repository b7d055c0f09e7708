"""Operating-point check: derating, the thermal chain, grading and the power hyperbola."""

from __future__ import annotations

import pytest

from partsdb.derating import BUILTIN_POLICIES
from partsdb.device import Device
from partsdb.operating import check_operating_point, grade_tj, hyperbola, thermal_estimate
from partsdb.thermal import case_to_ambient, chain_power, derated_power, junction_temperature

WORKSHOP = BUILTIN_POLICIES["workshop"]
MIL = BUILTIN_POLICIES["mil-std-975m"]


def small_signal(**kw: object) -> Device:
    base = {"designation": "XT625", "polarity": "npn", "material": "si", "vceo": 40.0,
            "ic_max": 0.2, "ptot": 0.625, "ptot_ref": "ambient", "tj_max": 150.0}
    base.update(kw)
    return Device(**base)  # type: ignore[arg-type]


def power_part(**kw: object) -> Device:
    # Case-rated 50 W, Tj max 175 C: Rth j-c = (175 - 25)/50 = 3 K/W.
    base = {"designation": "XP50", "polarity": "npn", "material": "si", "vceo": 60.0,
            "ic_max": 4.0, "ptot": 50.0, "ptot_ref": "case", "tj_max": 175.0,
            "package": "TO-220"}
    base.update(kw)
    return Device(**base)  # type: ignore[arg-type]


def test_thermal_chain_worked_check() -> None:
    # Tj = Ta + P (Rth j-c + Rth c-s + Rth s-a) (standard heat-sink arithmetic, e.g. Horowitz &
    # Hill, The Art of Electronics, 3rd ed., heat sinking section; from memory):
    # 5 W through 3 + 1 + 8 K/W at 25 C gives Tj 85 C and case 70 C.
    r = check_operating_point(power_part(), vce=10.0, ic=0.5, ambient=25.0, heatsink=8.0,
                              case_to_sink=1.0)
    assert r.rth_total == pytest.approx(12.0)
    assert r.tj_estimate == pytest.approx(85.0)
    assert r.tc_estimate == pytest.approx(70.0)
    tj = next(lim for lim in r.limits if lim.parameter == "tj")
    assert tj.status == "ok" and tj.allowed == pytest.approx(155.0)  # workshop: 20 K margin


def test_chain_power_is_the_worked_chain_solved_for_power() -> None:
    # The same arithmetic read the other way (same source): with 3 + 1 + 8 K/W and Tj max
    # 175 C at 25 C ambient the junction reaches its maximum at (175 - 25) / 12 = 12.5 W; the
    # part's own Ptot still caps it, and an ambient above Tj max allows nothing.
    assert case_to_ambient(8.0, 1.0) == pytest.approx(9.0)
    assert case_to_ambient(None, 1.0, 60.0) == pytest.approx(60.0)  # no sink: free air
    assert chain_power(50.0, 175.0, 25.0, 3.0 + case_to_ambient(8.0, 1.0)) == pytest.approx(12.5)
    assert chain_power(10.0, 175.0, 25.0, 12.0) == pytest.approx(10.0)
    assert chain_power(50.0, 175.0, 200.0, 12.0) == 0.0
    # The 5 W of the worked check stays inside that limit and gives its 85 C.
    assert junction_temperature(25.0, 5.0, 12.0) == pytest.approx(85.0)


@pytest.mark.parametrize(("ambient", "expected"), [
    # Linear derating P(T) = Ptot (Tjmax - T)/(Tjmax - 25) (makers' derating curves; a 625 mW,
    # 150 C TO-92 part is quoted "derate above 25 C: 5.0 mW/C", from memory of such sheets).
    (25.0, 0.625), (50.0, 0.625 - 25 * 5e-3), (87.5, 0.3125), (125.0, 0.125), (150.0, 0.0),
    (175.0, 0.0),    # beyond Tj max nothing is allowed
    (0.0, 0.625),    # below 25 C the rating is not raised (common practice)
])
def test_linear_derating(ambient: float, expected: float) -> None:
    assert derated_power(0.625, 150.0, ambient) == pytest.approx(expected, abs=1e-12)
    if ambient >= 150.0:  # an ambient at or above Tj max is refused (issue 13, item 8)
        with pytest.raises(ValueError, match="Tj max"):
            check_operating_point(small_signal(), vce=1.0, ic=1e-3, ambient=ambient)
        return
    r = check_operating_point(small_signal(), vce=1.0, ic=1e-3, ambient=ambient)
    power = next(lim for lim in r.limits if lim.parameter == "power")
    assert power.limit == pytest.approx(expected, abs=1e-12)


def test_free_air_tj_uses_rth_ja_from_the_rating() -> None:
    # Rth j-a = (Tjmax - 25)/Ptot = 125/0.625 = 200 K/W; 0.25 W at 40 C -> Tj 90 C.
    r = check_operating_point(small_signal(), vce=10.0, ic=0.025, ambient=40.0, heatsink=5.0)
    assert r.rth_total == pytest.approx(200.0)
    assert r.tj_estimate == pytest.approx(90.0)
    assert any("not credited" in n for n in r.notes)


@pytest.mark.parametrize(("vce", "status"), [(30.0, "ok"), (32.0, "ok"), (36.0, "marginal"),
                                             (40.0, "marginal"), (45.0, "under-rated")])
def test_voltage_grading_against_policy(vce: float, status: str) -> None:
    # Workshop policy: 80 % of Vceo is ok, up to the rating marginal, beyond under-rated.
    r = check_operating_point(small_signal(), vce=vce, ic=1e-3)
    lim = r.limits[0]
    assert lim.parameter == "vce" and lim.status == status
    assert lim.ratio == pytest.approx(vce / 40.0)
    assert lim.headroom == pytest.approx(32.0 - vce)


def test_current_and_power_grading_mil_policy() -> None:
    # MIL-STD-975M App. A: current <= 0.75 x rated, power <= 0.50 x rated.
    r = check_operating_point(small_signal(), vce=2.0, ic=0.16, policy=MIL)
    status = {lim.parameter: lim.status for lim in r.limits}
    assert status["ic"] == "marginal"          # 0.16 A > 0.75 x 0.2 A
    assert status["power"] == "marginal"       # 0.32 W > 0.5 x 0.625 W
    assert r.worst == "marginal"
    assert r.to_json()["policy"]["name"] == "mil-std-975m"


def test_tj_grading_uses_policy_limit() -> None:
    assert grade_tj(100.0, 150.0, MIL) == "ok"          # cap 125 C
    assert grade_tj(130.0, 150.0, MIL) == "marginal"
    assert grade_tj(151.0, 150.0, MIL) == "under-rated"
    assert grade_tj(135.0, 150.0, WORKSHOP) == "marginal"  # 150 - 20 = 130


def test_power_hyperbola() -> None:
    # Points with Vce x Ic = P(allowed) lie on the curve; Ic allowed at Vce is P/Vce.
    ic_allowed, vce_allowed, fraction = hyperbola(20.0, 0.1, 4.0)
    assert ic_allowed == pytest.approx(0.2)
    assert vce_allowed == pytest.approx(40.0)
    assert fraction == pytest.approx(0.5)
    r = check_operating_point(power_part(), vce=20.0, ic=0.5, heatsink=2.0, case_to_sink=0.5)
    # Rth 3 + 0.5 + 2 = 5.5 K/W; allowed = (175 - 25)/5.5 = 27.27 W.
    assert r.p_allowed == pytest.approx(150 / 5.5)
    assert r.ic_allowed_at_vce == pytest.approx(150 / 5.5 / 20.0)
    assert r.hyperbola_fraction == pytest.approx(10.0 / (150 / 5.5))


def test_case_rated_part_without_sink_uses_package_free_air() -> None:
    r = check_operating_point(power_part(), vce=5.0, ic=0.2)
    assert r.rth_total == pytest.approx(3.0 + 60.0)  # TO-220 free air, thermal.py table
    assert any("no heat sink" in n for n in r.notes)


def test_missing_tj_max_is_assumed_and_said() -> None:
    r = check_operating_point(small_signal(tj_max=None, material="ge"), vce=5.0, ic=0.01)
    assert any("assumed" in n and "85" in n for n in r.notes)
    tj = next(lim for lim in r.limits if lim.parameter == "tj")
    assert tj.limit == 85.0


def test_missing_ptot_grades_unknown() -> None:
    r = check_operating_point(small_signal(ptot=None), vce=5.0, ic=0.01)
    status = {lim.parameter: lim.status for lim in r.limits}
    assert status["power"] == "unknown" and status["tj"] == "unknown"
    assert r.tj_estimate is None


def test_json_keys() -> None:
    data = check_operating_point(small_signal(), vce=5.0, ic=0.01).to_json()
    assert set(data) >= {"device", "limits", "tj_estimate", "rth_total", "policy", "notes"}
    assert [lim["parameter"] for lim in data["limits"]] == ["vce", "ic", "power", "tj"]
    for lim in data["limits"]:
        assert set(lim) >= {"parameter", "limit", "actual", "ratio", "status"}


def test_thermal_estimate_works_on_columns() -> None:
    import numpy as np

    rth, p_allowed, tj, _ = thermal_estimate(np.array([0.625, 50.0]), np.array([150.0, 175.0]),
                                             np.array(["ambient", "case"]), 25.0,
                                             np.array([0.1, 5.0]), heatsink=8.0,
                                             case_to_sink=1.0)
    assert list(rth) == pytest.approx([200.0, 12.0])
    assert list(tj) == pytest.approx([45.0, 85.0])
    assert list(p_allowed) == pytest.approx([0.625, 150.0 / 12.0])


@pytest.mark.parametrize(("kwargs", "field"), [
    ({"vce": -1.0, "ic": 0.01}, "vce"),
    ({"vce": 1.0, "ic": float("nan")}, "ic"),
    ({"vce": 1.0, "ic": 0.01, "heatsink": -2}, "heatsink"),
])
def test_bad_inputs_name_the_field(kwargs: dict[str, float], field: str) -> None:
    with pytest.raises(ValueError, match=f"^{field}: "):
        check_operating_point(small_signal(), **kwargs)
