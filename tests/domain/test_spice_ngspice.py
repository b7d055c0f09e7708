"""partsdb's exponential bias solution against ngspice (the external circuit oracle).

ngspice solves the Gummel-Poon model; with only IS and BF set it reduces to the Ebers-Moll
transport equations that partsdb.bias solves, so both must agree on Ic and Vce (within 2 %;
in practice they agree to ngspice's six printed digits). ngspice's PNP currents and voltages
come out negative (RECIPES: "current leaves the collector"), so magnitudes are compared.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from partsdb.bias import Stage, TransistorParams, analyse_stage, solve_point
from partsdb.device import Device
from partsdb.spice import model_card, stage_netlist
from tests.ngspice import run_netlist

pytestmark = pytest.mark.ngspice

SI_NPN = TransistorParams("QN1", "npn", hfe=140, vbe=0.66, vbe_ic=2e-3)
SI_PNP = TransistorParams("QP1", "pnp", hfe=180, vbe=0.63, vbe_ic=1e-3)
GE_PNP = TransistorParams("QG1", "pnp", hfe=60, vbe=0.18, vbe_ic=1e-3, material="ge",
                          icbo=4e-6)

# (id, stage, device, ambient, leakage). Resistor values are ordinary E12/E24 bench values.
CASES = [
    ("npn-divider", Stage("divider", 22, rc=10e3, re=1.5e3, r1=39e3, r2=3.9e3), SI_NPN, 25.0,
     False),
    ("pnp-divider-hot", Stage("divider", 12, rc=2.2e3, re=470, r1=47e3, r2=10e3), SI_PNP, 55.0,
     False),
    ("npn-fixed-no-re", Stage("fixed", 12, rc=2.2e3, re=0.0, rb=470e3), SI_NPN, 25.0, False),
    ("pnp-collector-feedback", Stage("collector-feedback", 9, rc=3.3e3, re=330, rb=220e3),
     SI_PNP, 25.0, False),
    ("npn-collector-feedback", Stage("collector-feedback", 10, rc=4.7e3, re=1.2e3, rb=250e3),
     SI_NPN, 40.0, False),
    ("ge-pnp-divider-no-leakage", Stage("divider", 9, rc=2.2e3, re=1e3, r1=47e3, r2=10e3),
     GE_PNP, 25.0, False),
    ("ge-pnp-divider-leakage-45C", Stage("divider", 9, rc=2.2e3, re=1e3, r1=47e3, r2=10e3),
     GE_PNP, 45.0, True),
    # Near saturation: Vce a few hundred mV, the collector junction starting to conduct.
    ("npn-fixed-near-saturation", Stage("fixed", 12, rc=2.2e3, re=0.0, rb=280e3), SI_NPN, 25.0,
     False),
    # Deep saturation: the saturated Ebers-Moll equations, not the active ones.
    ("npn-fixed-saturated", Stage("fixed", 12, rc=2.2e3, re=0.0, rb=100e3), SI_NPN, 25.0,
     False),
    ("pnp-divider-saturated", Stage("divider", 12, rc=4.7e3, re=100, r1=10e3, r2=4.7e3), SI_PNP,
     25.0, False),
]


@pytest.mark.parametrize(("stage", "params", "ambient", "leakage"),
                         [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_exponential_solution_matches_ngspice(stage: Stage, params: TransistorParams,
                                              ambient: float, leakage: bool,
                                              tmp_path: Path) -> None:
    ours = solve_point(stage, params, "exponential", ambient, leakage)
    spice = run_netlist(stage_netlist(stage, params, ambient, leakage), tmp_path)
    ic_spice = abs(spice["ic"])
    vce_spice = abs(spice["vc"] - spice["ve"])
    assert ours.ic == pytest.approx(ic_spice, rel=0.02)
    assert ours.vce == pytest.approx(vce_spice, rel=0.02, abs=1e-3)
    assert ours.vb == pytest.approx(abs(spice["vb"]), rel=0.02)


def test_cases_cover_the_regions_they_claim(tmp_path: Path) -> None:
    """The case table really contains a near-saturated and a saturated stage."""
    by_id = {c[0]: c for c in CASES}
    near = solve_point(*by_id["npn-fixed-near-saturation"][1:3], "exponential")
    sat = solve_point(*by_id["npn-fixed-saturated"][1:3], "exponential")
    assert 0.2 < near.vce < 1.0 and near.region == "active"
    assert sat.region == "saturation" and sat.vce < 0.2
    # In saturation the forced gain Ic/Ib falls below beta.
    assert sat.ic / sat.ib < SI_NPN.hfe / 2


def test_fix_value_holds_in_ngspice(tmp_path: Path) -> None:
    """The exact fix resistor, simulated by ngspice with the substitute, gives the original Ic."""
    from partsdb.bias import predict_swap

    stage = Stage("divider", 9, rc=2.2e3, re=1e3, r1=47e3, r2=10e3)
    report = predict_swap(stage, GE_PNP, SI_PNP, leakage=False)
    assert report.fix is not None
    fixed = stage.with_resistor("r2", report.fix.exact)
    spice = run_netlist(stage_netlist(fixed, SI_PNP, 25.0, False), tmp_path)
    assert abs(spice["ic"]) == pytest.approx(report.original.point.ic, rel=0.01)


def test_model_card_reproduces_vbe_on_in_ngspice(tmp_path: Path) -> None:
    """Drive the base-emitter junction at the record's Vbe(on), 25 °C: Ic must be the test
    current the record quotes (that is how IS was derived), and BF the hFE geometric mean."""
    device = Device("XQ347", polarity="npn", material="si", hfe_min=100, hfe_max=400,
                    vbe_on=0.68, vbe_ic=5e-3, ft=250e6)
    card = model_card(device)
    netlist = "\n".join([
        "* model card check",
        "VBE b 0 DC 0.68",
        "VCE c 0 DC 5",
        "Q1 c b 0 XQ347",
        card.strip(),
        ".temp 25",
        ".control",
        "op",
        "echo RESULT IC=$&@q1[ic] IB=$&@q1[ib]",
        "quit 0",
        ".endc",
        ".end",
        "",
    ])
    spice = run_netlist(netlist, tmp_path)
    assert spice["ic"] == pytest.approx(5e-3, rel=0.01)
    assert spice["ic"] / spice["ib"] == pytest.approx(math.sqrt(100 * 400), rel=0.01)


def test_analysis_reports_ngspice_checked_point(tmp_path: Path) -> None:
    """analyse_stage's nominal point is the one ngspice confirms (no second code path)."""
    stage = CASES[0][1]
    result = analyse_stage(stage, SI_NPN, "exponential", leakage=False)
    spice = run_netlist(stage_netlist(stage, SI_NPN, 25.0, False), tmp_path)
    assert result.point.ic == pytest.approx(abs(spice["ic"]), rel=0.02)
