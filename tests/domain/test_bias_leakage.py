"""Leakage, the swap fix, Darlingtons and the ambient range of the bias solver (issue 13).

Each check names its outside source beside it; the fixed-Vbe results are compared with the
hand formulas of the textbooks, written out here rather than taken from partsdb.bias.
"""

from __future__ import annotations

import math

import pytest

from partsdb.bias import (
    BiasError,
    Stage,
    TransistorParams,
    analyse_bias,
    analyse_stage,
    params_from_device,
    predict_swap,
    stability_factor,
)
from partsdb.device import Device


def s_factor(beta: float, rb_over_re: float) -> float:
    """Boylestad & Nashelsky, Electronic Devices and Circuit Theory, ch. 4, bias
    stabilization: S(Ico) = (beta + 1)(1 + RB/RE)/((beta + 1) + RB/RE) (from memory)."""
    return (beta + 1) * (1 + rb_over_re) / ((beta + 1) + rb_over_re)


@pytest.mark.parametrize(("rb_over_re", "expected"), [(250.0, 42.53), (10.0, 9.2), (0.01, 1.01)])
def test_stability_factor_textbook_example(rb_over_re: float, expected: float) -> None:
    # Boylestad & Nashelsky, Electronic Devices and Circuit Theory, ch. 4 "Bias
    # Stabilization", the emitter-bias example with beta 50 and RB/RE = 250, 10 and 0.01
    # (from memory): S(Ico) = 42.53, 9.2 and about 1.01.
    re = 1e3
    stage = Stage("fixed", 20, rc=2e3, re=re, rb=rb_over_re * re)
    assert stability_factor(stage, 50.0) == pytest.approx(expected, rel=0.005)
    assert s_factor(50.0, rb_over_re) == pytest.approx(expected, rel=0.005)


def test_stability_factor_of_an_open_base_is_beta_plus_one() -> None:
    # No emitter resistance: every leakage electron is amplified, S = beta + 1 (same source).
    assert stability_factor(Stage("fixed", 12, rc=2.2e3, re=0.0, rb=470e3), 80.0) == 81.0


@pytest.mark.parametrize("ambient", [25.0, 45.0])
def test_solved_leakage_shift_is_s_times_icbo(ambient: float) -> None:
    # The demo stage (-9 V, 47k/10k, 2k2, 470) with a germanium part of Icbo 10 µA:
    # with a fixed Vbe the shift is exactly S x Icbo (Boylestad, from memory), with
    # RB = 47k || 10k. At 25 °C: S 15.6, shift 0.156 mA, not (beta + 1) Icbo = 0.93 mA.
    beta = math.sqrt(60 * 140)
    p = TransistorParams("G", "pnp", hfe=beta, vbe=0.25, hfe_min=60, hfe_max=140,
                         material="ge", icbo=10e-6)
    stage = Stage("divider", 9, rc=2.2e3, re=470, r1=47e3, r2=10e3)
    r = analyse_stage(stage, p, "fixed-vbe", ambient)
    icbo = 10e-6 * 2 ** ((ambient - 25) / 10)  # doubling every 10 K (common practice)
    rth = 47e3 * 10e3 / 57e3
    assert r.icbo == pytest.approx(icbo)
    assert r.leakage_ic == pytest.approx(s_factor(beta, rth / 470) * icbo, rel=1e-9)
    if ambient == 25.0:
        assert r.leakage_ic == pytest.approx(0.156e-3, rel=0.01)
    assert r.stability["s_icbo"] == pytest.approx(s_factor(beta, rth / 470))
    assert any("raises Ic by" in n and "with and without" in n for n in r.notes)
    assert r.to_json()["leakage_ic"] == r.leakage_ic


def test_no_leakage_means_no_shift() -> None:
    p = TransistorParams("G", "pnp", hfe=80, vbe=0.25, material="ge", icbo=10e-6)
    stage = Stage("divider", 9, rc=2.2e3, re=470, r1=47e3, r2=10e3)
    r = analyse_stage(stage, p, "fixed-vbe", 45.0, leakage=False)
    assert r.leakage_ic == 0.0 and not any("raises Ic" in n for n in r.notes)


# --- The fix -------------------------------------------------------------------------------

def test_fix_targets_the_design_point_not_the_warm_leaky_current() -> None:
    # At 45 °C the germanium original carries its leakage on top of the design current; the
    # fix aims at the design point (25 °C, no leakage), the same target at any ambient.
    stage = Stage("divider", 9, rc=2.2e3, re=470, r1=47e3, r2=10e3)
    ge = TransistorParams("G", "pnp", hfe=math.sqrt(60 * 140), vbe=0.25, hfe_min=60,
                          hfe_max=140, material="ge", icbo=10e-6)
    si = TransistorParams("S", "pnp", hfe=200, vbe=0.62, hfe_min=120, hfe_max=330, icbo=1e-7)
    cold = predict_swap(stage, ge, si, "fixed-vbe", 25.0)
    warm = predict_swap(stage, ge, si, "fixed-vbe", 45.0)
    assert cold.fix is not None and warm.fix is not None
    # Fixed-Vbe divider by the Thevenin formula (Boylestad & Nashelsky ch. 4, from memory):
    # Ic = beta (Vth - Vbe)/(Rth + (beta + 1) Re) for the original at 25 °C without leakage.
    vth, rth, beta = 9 * 10 / 57, 47e3 * 10e3 / 57e3, math.sqrt(60 * 140)
    design = beta * (vth - 0.25) / (rth + (beta + 1) * 470)
    assert cold.fix.target_ic == pytest.approx(design, rel=1e-9)
    assert warm.fix.target_ic == pytest.approx(design, rel=1e-9)
    assert warm.original.point.ic > 1.2 * design  # the leaky current is not the target
    assert "25 °C without leakage" in warm.fix.target
    e12 = warm.fix.to_json()["e12"]
    assert e12["ic_hfe_min"] < e12["ic"] < e12["ic_hfe_max"]
    assert {e12["region_hfe_min"], e12["region_hfe_max"]} == {"active"}


def test_fixed_bias_fix_shows_saturation_at_hfe_max() -> None:
    # A fixed-bias stage (no Re) swapped to a wide-window part: Ic = beta (Vcc - Vbe)/Rb
    # (Boylestad & Nashelsky ch. 4, fixed bias, from memory). At hFE max the fixed resistor
    # drives the part into saturation, which the fix must say.
    stage = Stage("fixed", 12, rc=3.3e3, re=0.0, rb=470e3)
    orig = TransistorParams("O", "npn", hfe=100, vbe=0.65, hfe_min=80, hfe_max=125)
    sub = TransistorParams("S", "npn", hfe=200, vbe=0.65, hfe_min=100, hfe_max=400)
    report = predict_swap(stage, orig, sub, "fixed-vbe")
    assert report.fix is not None
    opt = report.fix.e12
    ic_min = 100 * (12 - 0.65) / opt.value
    assert opt.ic_hfe_min == pytest.approx(ic_min, rel=1e-9)
    assert opt.region_hfe_min == "active"
    assert 400 * (12 - 0.65) / opt.value * 3.3e3 > 12 - 0.2  # hand check: would saturate
    assert opt.region_hfe_max == "saturation"


# --- Darlingtons ----------------------------------------------------------------------------

DARL = Device("XD120", kind="darlington", polarity="npn", material="si", hfe_min=1000,
              hfe_max=4000, icbo=1e-6, tj_max=150)


def test_darlington_vce_sat_defaults_to_about_0_9_v_and_says_so() -> None:
    # Output Vbe (~0.7 V) plus the driver's saturation (~0.2 V) (common practice).
    p = params_from_device(DARL)
    assert 0.8 <= p.vce_sat <= 1.0
    assert any("Vce(sat)" in n and "assumed" in n for n in p.notes)
    si = params_from_device(Device("XS1", polarity="npn", material="si", hfe_min=100,
                                   hfe_max=300))
    assert si.vce_sat == pytest.approx(0.2)


def test_darlington_leakage_is_the_pairs_own_not_amplified() -> None:
    # The pair's Icbo enters at its terminals (collector to emitter). By the Thevenin loop
    # with Ic = beta Ib + Icbo and Ie = Ib + Ic, dIc/dIcbo = (Rth + Re)/(Rth + (beta + 1) Re),
    # below 1; an open-base treatment would multiply by beta1 x beta2 = 2000.
    p = params_from_device(DARL)
    stage = Stage("divider", 24, rc=1e3, re=1e3, r1=100e3, r2=47e3)
    r = analyse_stage(stage, p, "fixed-vbe", 25.0)
    rth = 100e3 * 47e3 / 147e3
    expected = (rth + 1e3) / (rth + (p.hfe + 1) * 1e3) * 1e-6
    assert r.leakage_ic == pytest.approx(expected, rel=1e-6)
    assert r.leakage_ic < 1e-6


# --- Ambient ---------------------------------------------------------------------------------

def test_ambient_at_or_above_tj_max_is_refused_naming_both() -> None:
    p = params_from_device(Device("XS2", polarity="npn", material="si", hfe_min=100,
                                  hfe_max=300, tj_max=150))
    stage = Stage("divider", 9, rc=2.2e3, re=470, r1=47e3, r2=10e3)
    for ambient in (150.0, 400.0):
        with pytest.raises(BiasError) as err:
            analyse_bias(stage, p, ambient=ambient)
        text = str(err.value)
        assert "ambient" in text and f"{ambient:g}" in text and "150" in text
        assert "\n" not in text


@pytest.mark.parametrize("ambient", [-55.0, -20.0, 0.0, 25.0, 85.0, 150.0, 200.0, 250.0, 299.0,
                                     300.0])
@pytest.mark.parametrize("network", ["divider", "fixed", "collector-feedback"])
def test_every_ambient_from_minus_55_to_300_gives_a_point_or_a_clear_error(
        ambient: float, network: str) -> None:
    stage = (Stage("divider", 9, rc=2.2e3, re=470, r1=47e3, r2=10e3) if network == "divider"
             else Stage(network, 9, rc=2.2e3, re=470, rb=220e3))
    parts = [
        TransistorParams("given", "npn", hfe=200, vbe=0.65, vbe_ic=2e-3),
        params_from_device(Device("XH1", polarity="npn", material="si", tj_max=300,
                                  hfe_min=100, hfe_max=300, vbe_on=0.66, vbe_ic=2e-3,
                                  icbo=15e-9)),
        params_from_device(Device("XG9", polarity="pnp", material="ge", hfe_min=50,
                                  hfe_max=100, icbo=10e-6)),
        params_from_device(DARL),
    ]
    for p in parts:
        for model in ("auto", "fixed-vbe"):
            try:
                r = analyse_bias(stage, p, model=model, ambient=ambient)
            except BiasError as err:
                assert str(err).startswith("ambient:") and "\n" not in str(err)
                continue
            pt = r.original.point
            full = 9 / (2.2e3 + 470)
            # Regions from the solved currents: a stage carrying a real current is not cut off.
            if pt.ic > 1e-3 * full:
                assert pt.region != "cut-off", (p.name, model, ambient, pt)
            assert pt.vce > -1e-3


def test_ambient_outside_the_model_range_is_refused() -> None:
    p = TransistorParams("given", "npn", hfe=200, vbe=0.65)
    stage = Stage("fixed", 12, rc=2.2e3, re=0.0, rb=470e3)
    for ambient in (-56.0, 301.0, 400.0):
        with pytest.raises(BiasError, match="ambient"):
            analyse_bias(stage, p, ambient=ambient)
