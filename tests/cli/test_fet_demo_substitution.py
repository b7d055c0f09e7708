"""Issue 19, substitution: the demo's failed N-channel power MOSFET and its obsolete N-channel
audio JFET, ranked and written on a job sheet as a technician would ask. The demo records are
only the inputs; every expected figure is worked by hand below from the values asserted first
(the rules: partsdb.ranking.fet_rules, common practice).
"""

from __future__ import annotations

import json
from typing import Any

import pytest
from click.testing import CliRunner

from partsdb.cli import main


@pytest.fixture(scope="module")
def demo_url(tmp_path_factory: pytest.TempPathFactory) -> str:
    from partsdb.services.demo import build_demo

    path = tmp_path_factory.mktemp("fetdemo") / "demo.sqlite"
    build_demo(path).dispose()
    return str(path)


def _run(url: str, *args: str) -> Any:
    result = CliRunner().invoke(main, ["--db", url, *args])
    assert result.exit_code == 0, result.output
    return result


def _device(url: str, name: str) -> dict[str, Any]:
    data = json.loads(_run(url, "device", "show", name, "--format", "json").stdout)
    return dict(data.get("device", data))


def _candidate(data: dict[str, Any], name: str) -> dict[str, Any]:
    return next(c for c in data["candidates"] if c["designation"] == name)


def test_failed_power_mosfet_ranked_with_the_sums_by_hand(demo_url: str) -> None:
    orig, logic = _device(demo_url, "2SK8610"), _device(demo_url, "2SK8624")
    assert (orig["kind"], orig["polarity"], orig["vds"]) == ("mosfet", "n", 200.0)
    assert (logic["rds_on"], logic["rds_on_vgs"], logic["rth_jc"], logic["tj_max"],
            logic["package"]) == (0.16, 4.5, 1.14, 150.0, "TO-220")
    data = json.loads(_run(demo_url, "substitute", "2SK8610", "--drive", "10V", "--vds-peak",
                           "160V", "--id-peak", "8A", "--heatsink", "2",
                           "--format", "json").stdout)
    assert {c["designation"] for c in data["candidates"]} >= {"2SK8624", "2SK8633"}
    assert all(c["device"]["kind"] == "mosfet" and c["device"]["polarity"] == "n"
               for c in data["candidates"])
    checks = {k["parameter"]: k for k in _candidate(data, "2SK8624")["checks"]}
    # Rth = 1.14 (j-c) + 1.0 (TO-220 to sink) + 2 (sink) = 4.14 K/W; Id^2 Rds(25) Rth =
    # 64 x 0.16 x 4.14 = 42.39 K (< 73.8 = 1/(e ln 1.005): a fixed point exists). x = Tj - 25
    # solves x = 42.39 x 1.005^x: 42.39, 52.38, 55.05, 55.79, 55.99, 56.05, ... -> 56.07
    # (calculator), so Tj = 81.07 °C and P = 10.24 W x 1.005^56.07 = 10.24 x 1.3227 = 13.54 W.
    assert checks["tj_max"]["need"] == pytest.approx(81.07, abs=0.05)
    assert checks["ptot"]["need"] == pytest.approx(13.54, abs=0.02)
    # allowed on that sink (150 - 25) / 4.14 = 30.19 W: 13.54 / 30.19 = 45 % <= 70 %: ok
    assert checks["ptot"]["offered"] == pytest.approx(30.19, abs=0.01)
    assert checks["ptot"]["status"] == "ok" and checks["tj_max"]["status"] == "ok"
    # 10 V drive >= its 4.5 V Rds(on) test voltage: ok; 160 V on 200 V = 80 %: ok (at the limit)
    assert checks["drive"]["status"] == "ok" and checks["vds"]["status"] == "ok"
    # Vgs max 16 V: the 10 V drive is 62.5 % of it (<= 80 %): ok
    assert checks["vgs_max"]["ratio"] == pytest.approx(1.6)


def test_failed_power_mosfet_job_sheet(demo_url: str) -> None:
    text = _run(demo_url, "substitute", "2SK8610", "--pick", "2SK8624", "--job", "J-2621",
                "--drive", "10V", "--vds-peak", "160V", "--id-peak", "8A", "--heatsink", "2",
                "--format", "md").stdout
    assert "# Job sheet J-2621: 2SK8610 -> 2SK8624" in text
    assert "| Gate drive | 10 V | 4.5 V | ok |" in text
    assert "Tj = 25 °C + 13.5 W x 4.14 K/W = 81.1 °C" in text
    assert "C2/D07" in text and "static discharge" in text


def test_obsolete_audio_jfet_ranked_with_the_stage_shift_by_hand(demo_url: str) -> None:
    orig, high = _device(demo_url, "2SK8170"), _device(demo_url, "2SK8172")
    assert (orig["idss_min"], orig["idss_max"], orig["vgs_off_min"], orig["vgs_off_max"]) == \
        pytest.approx((0.0026, 0.0065, -0.4, -1.5))
    assert (high["idss_min"], high["idss_max"], high["vgs_off_min"], high["vgs_off_max"]) == \
        pytest.approx((0.006, 0.014, -0.6, -2.0))
    data = json.loads(_run(demo_url, "substitute", "2SK8170", "--vds-peak", "24V",
                           "--format", "json").stdout)
    assert all(c["device"]["kind"] == "jfet" and c["device"]["polarity"] == "n"
               for c in data["candidates"])
    idss = next(k for k in _candidate(data, "2SK8172")["checks"] if k["parameter"] == "idss")
    # centres: original Idss sqrt(2.6 x 6.5) = 4.111 mA, |Vp| sqrt(0.4 x 1.5) = 0.7746 V;
    # Rs = 2 x 0.7746 / 4.111 mA = 376.8 Ω, stage current Idss/4 = 1.028 mA.
    # 2SK8172: Idss sqrt(6 x 14) = 9.165 mA, |Vp| sqrt(0.6 x 2) = 1.0954 V;
    # k = 1.0954 / (376.8 x 9.165 mA) = 0.3172; u^2 - 2.3172 u + 1 = 0:
    # u = (2.3172 - sqrt(2.3172^2 - 4)) / 2 = (2.3172 - 1.1702) / 2 = 0.5735;
    # Id = 0.5735 x 1.0954 / 376.8 = 1.667 mA: +62 %.
    assert "runs at 1.67 mA instead of 1.03 mA (+62%" in idss["note"]
    assert "377 Ω" in idss["note"]
    assert idss["status"] == "marginal"  # 6..14 mA reaches above 2.6..6.5 mA


def test_obsolete_audio_jfet_job_sheet(demo_url: str) -> None:
    text = _run(demo_url, "substitute", "2SK8170", "--pick", "2SK8172", "--job", "J-2623",
                "--vds-peak", "24V", "--format", "md").stdout
    assert "# Job sheet J-2623: 2SK8170 -> 2SK8172" in text
    assert "| Vds | 24 V | 40 V | ok |" in text  # 24 / 40 = 60 % <= 80 %
    assert "C1/D09" in text
