"""Bias of common-emitter stages: textbook worked examples, identities, swap prediction, fix.

Worked examples are recalled from the books named beside each case (results from memory, the
inputs as the books set them); each is recomputed by hand in the comment so a wrong memory
would show.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from partsdb.bias import (
    BiasError,
    Stage,
    TransistorParams,
    alpha_from_beta,
    analyse_bias,
    analyse_stage,
    beta_from_alpha,
    leakage_at,
    params_from_device,
    predict_swap,
    solve_point,
    thermal_voltage,
)
from partsdb.device import Device
from partsdb.eseries import nearest


def npn(beta: float, vbe: float = 0.7, **kw: object) -> TransistorParams:
    return TransistorParams("T", "npn", hfe=beta, vbe=vbe, **kw)  # type: ignore[arg-type]


# --- Textbook worked examples, fixed-Vbe model ----------------------------------------------
# (stage, beta, expected Ic [A], expected Vce [V], tolerance, source)
WORKED = [
    # Boylestad & Nashelsky, Electronic Devices and Circuit Theory, ch. 4, voltage-divider bias,
    # exact analysis (Example 4.7 in the editions recalled; from memory): Vth 2 V,
    # Rth 3.55 kOhm, Ib 6.05 uA -> Ic 0.85 mA, Vce 12.22 V.
    (Stage("divider", 22, rc=10e3, re=1.5e3, r1=39e3, r2=3.9e3), 140, 0.85e-3, 12.22, 0.01),
    # Sedra & Smith, Microelectronic Circuits, BJT DC analysis examples, voltage-divider circuit
    # (VCC 15 V, RB1 100k, RB2 50k, RE 3k, RC 5k, beta 100; example number varies by edition,
    # from memory): VBB 5 V, RBB 33.3k, IE 1.29 mA, IC 1.28 mA, VC 8.6 V, VE 3.87 V, so
    # VCE 4.73 V.
    (Stage("divider", 15, rc=5e3, re=3e3, r1=100e3, r2=50e3), 100, 1.28e-3, 8.6 - 3.87, 0.01),
    # Boylestad & Nashelsky, ch. 4, fixed-bias configuration (Example 4.1, from memory):
    # VCC 12 V, RB 240k, RC 2.2k, beta 50 -> IB 47.08 uA, IC 2.35 mA, VCE 6.83 V.
    (Stage("fixed", 12, rc=2.2e3, re=0.0, rb=240e3), 50, 2.35e-3, 6.83, 0.005),
    # Boylestad & Nashelsky, ch. 4, emitter-stabilized bias (Example 4.4, from memory):
    # VCC 20 V, RB 430k, RC 2k, RE 1k, beta 50 -> IB 40.1 uA, IC 2.01 mA, VCE 13.97 V.
    (Stage("fixed", 20, rc=2e3, re=1e3, rb=430e3), 50, 2.01e-3, 13.97, 0.005),
    # Boylestad & Nashelsky, ch. 4, DC bias with voltage feedback (collector feedback), from
    # memory: VCC 10 V, RF 250k, RC 4.7k, RE 1.2k, beta 90 -> IB 11.91 uA, IC 1.07 mA,
    # VCE 3.69 V. The book takes the current in RC as Ic (beta, not beta+1); the exact
    # solution differs by about 1 %, hence the wider tolerance.
    (Stage("collector-feedback", 10, rc=4.7e3, re=1.2e3, rb=250e3), 90, 1.07e-3, 3.69, 0.015),
]


@pytest.mark.parametrize(("stage", "beta", "ic", "vce", "tol"), WORKED,
                         ids=["boylestad-divider", "sedra-smith-divider", "boylestad-fixed",
                              "boylestad-emitter-stabilized", "boylestad-collector-feedback"])
def test_textbook_worked_examples(stage: Stage, beta: float, ic: float, vce: float,
                                  tol: float) -> None:
    point = solve_point(stage, npn(beta), "fixed-vbe", leakage=False)
    assert point.region == "active"
    assert point.ic == pytest.approx(ic, rel=tol)
    assert point.vce == pytest.approx(vce, rel=tol)


def test_divider_matches_thevenin_formula_exactly() -> None:
    # Exact Thevenin method (Boylestad & Nashelsky ch. 4): Ib = (Vth - Vbe)/(Rth + (b+1) Re).
    vcc, r1, r2, rc, re, beta, vbe = 22.0, 39e3, 3.9e3, 10e3, 1.5e3, 140.0, 0.7
    vth, rth = vcc * r2 / (r1 + r2), r1 * r2 / (r1 + r2)
    ib = (vth - vbe) / (rth + (beta + 1) * re)
    p = solve_point(Stage("divider", vcc, rc=rc, re=re, r1=r1, r2=r2), npn(beta), "fixed-vbe")
    assert p.ib == pytest.approx(ib, rel=1e-12)
    assert p.ic == pytest.approx(beta * ib, rel=1e-12)
    assert p.vce == pytest.approx(vcc - beta * ib * rc - (beta + 1) * ib * re, rel=1e-12)


# --- Identities and constants -----------------------------------------------------------------
@pytest.mark.parametrize(("beta", "alpha"), [(100, 0.990099), (50, 0.980392)])
def test_alpha_beta_identity(beta: float, alpha: float) -> None:
    # alpha = beta/(beta+1), beta = alpha/(1-alpha): Sedra & Smith, Microelectronic Circuits,
    # BJT chapter (definition of the common-base gain).
    assert alpha_from_beta(beta) == pytest.approx(alpha, abs=1e-6)
    assert beta_from_alpha(alpha_from_beta(beta)) == pytest.approx(beta, rel=1e-12)


def test_thermal_voltage_from_si_defining_constants() -> None:
    # SI Brochure 9th ed. (2019): k = 1.380649e-23 J/K and e = 1.602176634e-19 C exactly.
    assert thermal_voltage(27.0) == pytest.approx(1.380649e-23 * 300.15 / 1.602176634e-19,
                                                  rel=1e-12)
    assert thermal_voltage(27.0) == pytest.approx(25.865e-3, abs=0.01e-3)


def test_leakage_doubles_every_ten_kelvin() -> None:
    # Icbo roughly doubles every 10 C (common practice).
    p = TransistorParams("G", "pnp", hfe=50, vbe=0.2, material="ge", icbo=5e-6)
    assert leakage_at(p, 25.0) == pytest.approx(5e-6)
    assert leakage_at(p, 35.0) == pytest.approx(10e-6)
    assert leakage_at(p, 55.0) == pytest.approx(40e-6)


def test_leakage_adds_beta_plus_one_icbo_through_the_thevenin_loop() -> None:
    # Derived independently: Ic = beta Ib + (beta+1) Icbo, and the emitter carries
    # Ib + Ic = (beta+1)(Ib + Icbo), so Ib = (Vth - Vbe - (beta+1) Icbo Re)/(Rth + (beta+1) Re).
    vcc, r1, r2, rc, re, beta, vbe, icbo = 9.0, 47e3, 10e3, 2.2e3, 1e3, 60.0, 0.2, 8e-6
    vth, rth = vcc * r2 / (r1 + r2), r1 * r2 / (r1 + r2)
    ib = (vth - vbe - (beta + 1) * icbo * re) / (rth + (beta + 1) * re)
    ic = beta * ib + (beta + 1) * icbo
    p = TransistorParams("G", "pnp", hfe=beta, vbe=vbe, icbo=icbo, material="ge")
    point = solve_point(Stage("divider", vcc, rc=rc, re=re, r1=r1, r2=r2), p, "fixed-vbe")
    assert point.ic == pytest.approx(ic, rel=1e-12)
    off = solve_point(Stage("divider", vcc, rc=rc, re=re, r1=r1, r2=r2), p, "fixed-vbe",
                      leakage=False)
    assert off.ic < point.ic


# --- Regions ----------------------------------------------------------------------------------
def test_saturation_uses_the_saturated_equations() -> None:
    # Fixed bias, Re = 0, overdriven: Vce = Vce(sat), so Ic = (Vcc - Vce(sat))/Rc
    # (Boylestad & Nashelsky ch. 4, transistor saturation level, with Vce(sat) instead of 0).
    stage = Stage("fixed", 12, rc=2.2e3, re=0.0, rb=50e3)
    p = npn(100, vce_sat=0.2)
    point = solve_point(stage, p, "fixed-vbe")
    assert point.region == "saturation"
    assert point.vce == pytest.approx(0.2)
    assert point.ic == pytest.approx((12 - 0.2) / 2.2e3, rel=1e-12)
    assert point.ic < 100 * point.ib  # forced beta below beta


def test_cut_off_when_divider_voltage_below_vbe() -> None:
    stage = Stage("divider", 5, rc=1e3, re=100, r1=100e3, r2=10e3)  # Vth 0.45 V < 0.7 V
    for model, p in (("fixed-vbe", npn(100)), ("exponential", npn(100, vbe_ic=1e-3))):
        point = solve_point(stage, p, model, leakage=False)
        assert point.region == "cut-off"
        assert point.ic < 1e-6
        assert point.vce == pytest.approx(5.0, rel=1e-3)


def test_pnp_is_the_mirror_of_npn() -> None:
    stage = Stage("collector-feedback", 9, rc=3.3e3, re=330, rb=220e3)
    for model in ("fixed-vbe", "exponential"):
        a = solve_point(stage, TransistorParams("A", "npn", 120, 0.6, vbe_ic=1e-3), model)
        b = solve_point(stage, TransistorParams("B", "pnp", 120, 0.6, vbe_ic=1e-3), model)
        assert (a.ic, a.vce, a.vb) == (b.ic, b.vce, b.vb)


def test_hfe_window_brackets_the_typical_point() -> None:
    device = Device("XQ1", polarity="npn", material="si", hfe_min=100, hfe_max=400,
                    vbe_on=0.65, vbe_ic=1e-3)
    params = params_from_device(device)
    assert params.hfe == pytest.approx(200.0)  # geometric mean of 100 and 400
    r = analyse_stage(Stage("fixed", 12, rc=2.2e3, re=470, rb=1e6), params)
    assert r.model == "exponential"
    assert r.ic_hfe_min < r.ic_hfe_typ < r.ic_hfe_max
    # Fixed bias is nearly proportional to beta (Boylestad ch. 4): spread close to 4x at
    # Re small against Rb/beta.
    assert 2.5 < r.stability["ic_spread"] < 4.0


def test_divider_stability_rule() -> None:
    # Malvino, Electronic Principles, voltage-divider bias (from memory): firm when
    # Rth <= 0.1 beta Re. Boylestad's divider: Rth 3.55k <= 0.1 x 140 x 1.5k = 21k.
    firm = analyse_stage(Stage("divider", 22, rc=10e3, re=1.5e3, r1=39e3, r2=3.9e3), npn(140))
    assert firm.stability["met"] is True
    assert firm.stability["limit"] == pytest.approx(21e3)
    weak = analyse_stage(Stage("divider", 12, rc=4.7e3, re=100, r1=470e3, r2=47e3), npn(100))
    assert weak.stability["met"] is False and weak.stability["grade"] == "not firm"


# --- Bad input --------------------------------------------------------------------------------
@pytest.mark.parametrize(("kwargs", "field"), [
    ({"network": "divider", "vcc": 12, "rc": -1e3, "re": 100, "r1": 1e3, "r2": 1e3}, "rc"),
    ({"network": "divider", "vcc": 12, "rc": 1e3, "re": None, "r1": 1e3, "r2": 1e3}, "re"),
    ({"network": "fixed", "vcc": 12, "rc": 1e3, "re": 0, "rb": 1e5, "r1": 1e3}, "r1"),
    ({"network": "fixed", "vcc": 12, "rc": 1e3, "re": 0}, "rb"),
    ({"network": "divider", "vcc": 0, "rc": 1e3, "re": 0, "r1": 1e3, "r2": 1e3}, "vcc"),
    ({"network": "bridge", "vcc": 12, "rc": 1e3, "re": 0}, "network"),
])
def test_nonsense_stage_names_the_field(kwargs: dict[str, object], field: str) -> None:
    with pytest.raises(BiasError, match=f"^{field}: ") as err:
        Stage(**kwargs)  # type: ignore[arg-type]
    assert err.value.field == field
    assert str(err.value).startswith(f"{field}: ")


def test_exponential_refused_without_test_current() -> None:
    with pytest.raises(BiasError, match="model"):
        analyse_bias(Stage("fixed", 12, rc=1e3, re=0, rb=1e6), npn(100), model="exponential")


# --- Swap prediction: the acceptance case ---------------------------------------------------
GE_ORIGINAL = Device("XG71", kind="bjt", polarity="pnp", material="ge", hfe_min=40,
                     hfe_max=90, vbe_on=0.2, vbe_ic=1e-3, icbo=5e-6, tj_max=75)
SI_SUBSTITUTE = Device("XS558", kind="bjt", polarity="pnp", material="si", hfe_min=60,
                       hfe_max=150, vbe_on=0.62, vbe_ic=1e-3)
ACCEPT_STAGE = Stage("divider", 9, rc=2.2e3, re=1e3, r1=47e3, r2=10e3)


def thevenin_ic(stage: Stage, beta: float, vbe: float) -> float:
    """Exact Thevenin method, written out here independently of partsdb.bias."""
    assert stage.r1 and stage.r2 and stage.re is not None
    vth = stage.vcc * stage.r2 / (stage.r1 + stage.r2)
    rth = stage.r1 * stage.r2 / (stage.r1 + stage.r2)
    return beta * (vth - vbe) / (rth + (beta + 1) * stage.re)


def test_germanium_to_silicon_swap_shift_and_fix() -> None:
    orig, sub = params_from_device(GE_ORIGINAL), params_from_device(SI_SUBSTITUTE)
    report = predict_swap(ACCEPT_STAGE, orig, sub, model="fixed-vbe", leakage=False)
    assert report.substitute is not None and report.fix is not None
    # The Vbe change (0.2 -> 0.62 V) accounts for the fall, gain change included.
    expected_orig = thevenin_ic(ACCEPT_STAGE, math.sqrt(40 * 90), 0.2)
    expected_sub = thevenin_ic(ACCEPT_STAGE, math.sqrt(60 * 150), 0.62)
    assert report.original.point.ic == pytest.approx(expected_orig, rel=1e-9)
    assert report.substitute.point.ic == pytest.approx(expected_sub, rel=1e-9)
    assert report.ic_change == pytest.approx(expected_sub / expected_orig - 1, rel=1e-9)
    assert report.ic_change < -0.2  # a real fall, the reason the bench needs the fix
    assert report.vce_change > 0
    # Fix: raise R2. The E24 value brings Ic within 10 % of the original.
    assert report.fix.resistor == "r2"
    assert report.fix.exact > ACCEPT_STAGE.r2  # type: ignore[operator]
    assert report.fix.e24.value == nearest(report.fix.exact, "E24")
    assert report.fix.e24.ic == pytest.approx(report.original.point.ic, rel=0.10)
    assert report.fix.e12.value == nearest(report.fix.exact, "E12")


def test_germanium_to_silicon_swap_with_leakage_and_exponential_model() -> None:
    orig, sub = params_from_device(GE_ORIGINAL), params_from_device(SI_SUBSTITUTE)
    report = predict_swap(ACCEPT_STAGE, orig, sub, ambient=35.0)
    assert report.original.model == "exponential"
    assert report.original.icbo == pytest.approx(10e-6)  # 5 uA doubled at 35 C
    assert report.fix is not None
    assert report.fix.e24.ic == pytest.approx(report.original.point.ic, rel=0.10)
    data = report.to_json()
    assert set(data) >= {"network", "original", "substitute", "fix"}
    assert set(data["fix"]) >= {"resistor", "exact", "e12", "e24"}
    assert set(data["fix"]["e24"]) >= {"value", "ic", "vce"}
    assert set(data["original"]) >= {"ic", "ib", "vce", "vb", "ve", "power", "region", "model",
                                     "ic_hfe_min", "ic_hfe_max"}


def test_assumed_germanium_leakage_is_named() -> None:
    device = Device("XG2", polarity="pnp", material="ge", hfe_min=30, hfe_max=60)
    params = params_from_device(device)
    assert params.icbo > 0 and params.vbe == pytest.approx(0.25)
    assert any("Icbo" in n and "assumed" in n for n in params.notes)
    assert any("Vbe(on)" in n and "assumed" in n for n in params.notes)


def test_swap_that_saturates_is_flagged() -> None:
    stage = Stage("fixed", 12, rc=4.7e3, re=0.0, rb=470e3)
    report = predict_swap(stage, npn(50, vbe_ic=1e-3), npn(400, vbe_ic=1e-3))
    assert report.substitute is not None
    assert report.substitute.point.region == "saturation"
    assert report.to_json()["shift"]["saturates"] is True
    assert report.fix is not None and report.fix.exact > 470e3


# --- Property: the exact fix restores the original Ic ---------------------------------------
resistor = st.floats(min_value=1e3, max_value=200e3)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(network=st.sampled_from(["divider", "fixed", "collector-feedback"]),
       vcc=st.floats(min_value=5, max_value=30), r1=resistor, r2=resistor,
       rb=st.floats(min_value=50e3, max_value=2e6), rc=st.floats(min_value=100, max_value=10e3),
       re=st.floats(min_value=0, max_value=2e3),
       beta=st.tuples(st.floats(min_value=20, max_value=400),
                      st.floats(min_value=20, max_value=400)),
       vbe=st.tuples(st.floats(min_value=0.15, max_value=0.3),
                     st.floats(min_value=0.55, max_value=0.75)),
       model=st.sampled_from(["fixed-vbe", "exponential"]))
def test_fix_exact_value_restores_original_ic(network: str, vcc: float, r1: float, r2: float,
                                              rb: float, rc: float, re: float,
                                              beta: tuple[float, float],
                                              vbe: tuple[float, float], model: str) -> None:
    stage = (Stage("divider", vcc, rc=rc, re=re, r1=r1, r2=r2) if network == "divider"
             else Stage(network, vcc, rc=rc, re=re, rb=rb))
    orig = TransistorParams("G", "pnp", hfe=beta[0], vbe=vbe[0], vbe_ic=1e-3, material="ge",
                            icbo=2e-6)
    sub = TransistorParams("S", "pnp", hfe=beta[1], vbe=vbe[1], vbe_ic=1e-3)
    report = predict_swap(stage, orig, sub, model=model)
    assume(report.original.point.region == "active" and report.fix is not None)
    assert report.fix is not None
    fixed = stage.with_resistor(report.fix.resistor, report.fix.exact)
    ic = solve_point(fixed, sub, model).ic
    # The target is the design point: the original at 25 °C without its leakage (issue 13).
    design = solve_point(stage, orig, model, 25.0, leakage=False).ic
    assert report.fix.target_ic == pytest.approx(design, rel=1e-12)
    assert ic == pytest.approx(design, rel=1e-3)
