"""CLI: check, bias and spice, invoked like a user would, results checked through the library."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner, Result

from partsdb.bias import Stage, TransistorParams, analyse_bias, params_from_device, predict_swap
from partsdb.cli import main
from partsdb.device import Device
from partsdb.operating import check_operating_point

GE = Device("XG71", polarity="pnp", material="ge", vceo=20.0, ic_max=0.05, ptot=0.125,
            ptot_ref="ambient", tj_max=75.0, hfe_min=40, hfe_max=90, vbe_on=0.2, vbe_ic=1e-3,
            icbo=5e-6)
SI = Device("XS558", polarity="pnp", material="si", vceo=45.0, ic_max=0.1, ptot=0.5,
            ptot_ref="ambient", tj_max=150.0, hfe_min=60, hfe_max=150, vbe_on=0.62,
            vbe_ic=1e-3, ft=150e6)


@pytest.fixture
def db_with_parts(tmp_path: Path) -> str:
    """A SQLite file holding two invented PNP parts (germanium original, silicon substitute)."""
    from partsdb.services import catalog
    from partsdb.storage.database import open_database

    url = f"sqlite:///{tmp_path / 't.sqlite'}"
    db = open_database(url, notify=None)
    with db.session() as session:
        for device in (GE, SI):
            catalog.add_device(session, device)
    db.dispose()
    return url


def run(*args: str, db: str | None = None) -> Result:
    prefix = ["--db", db, "-q"] if db else []
    return CliRunner().invoke(main, [*prefix, *args])


def test_commands_are_registered_with_help() -> None:
    for name in ("check", "bias", "spice"):
        result = run(name, "--help")
        assert result.exit_code == 0, result.output
        assert "Example:" in result.output


def test_bias_json_matches_library_for_given_params() -> None:
    result = run("bias", "divider", "--vcc", "22V", "--r1", "39k", "--r2", "3k9", "--rc", "10k",
                 "--re", "1k5", "--polarity", "npn", "--hfe", "140", "--vbe", "0.7V",
                 "--format", "json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    expected = analyse_bias(Stage("divider", 22, rc=10e3, re=1.5e3, r1=39e3, r2=3.9e3),
                            TransistorParams("given", "npn", 140, 0.7)).original.point
    assert data["network"] == "divider"
    assert data["original"]["ic"] == pytest.approx(expected.ic)
    assert data["original"]["vce"] == pytest.approx(expected.vce)
    assert data["original"]["model"] == "fixed-vbe"


def test_bias_swap_with_stored_devices(db_with_parts: str) -> None:
    result = run("bias", "divider", "--vcc", "-9V", "--r1", "47k", "--r2", "10k", "--rc", "2k2",
                 "--re", "1k", "--device", "XG71", "--substitute", "XS558", "--format", "json",
                 db=db_with_parts)
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    report = predict_swap(Stage("divider", 9, rc=2.2e3, re=1e3, r1=47e3, r2=10e3),
                          params_from_device(GE), params_from_device(SI))
    assert report.fix is not None
    assert data["substitute"]["ic"] == pytest.approx(report.substitute.point.ic)  # type: ignore[union-attr]
    assert data["fix"]["resistor"] == "r2"
    assert data["fix"]["e24"]["value"] == report.fix.e24.value
    assert data["fix"]["exact"] == pytest.approx(report.fix.exact)


def test_bias_table_shows_fix_and_caution(db_with_parts: str) -> None:
    result = run("bias", "divider", "--vcc", "9V", "--r1", "47k", "--r2", "10k", "--rc", "2k2",
                 "--re", "1k", "--device", "XG71", "--substitute", "XS558", "--netlist",
                 db=db_with_parts)
    out = result.output
    assert result.exit_code == 0, out
    assert "Fix: change R2" in out and "E24" in out
    assert "Caution" in out
    assert ".control" in out and "quit 0" in out


@pytest.mark.parametrize(("args", "named"), [
    (["--vcc", "-12V", "--polarity", "npn"], "--vcc"),            # negative supply on an NPN
    (["--vcc", "12V", "--polarity", "npn", "--rc", "-2k2"], "rc"),  # negative resistor
    (["--vcc", "12V", "--polarity", "npn", "--r1", "4O7"], "r1"),  # R-notation junk
])
def test_bias_nonsense_exits_2(args: list[str], named: str) -> None:
    base = {"--r1": "47k", "--r2": "10k", "--rc": "2k2", "--re": "470", "--hfe": "100",
            "--vbe": "0.65"}
    given = dict(zip(args[::2], args[1::2], strict=True))
    merged = [x for k, v in {**base, **given}.items() for x in (k, v)]
    result = run("bias", "divider", *merged)
    assert result.exit_code == 2
    assert named in result.output


def test_bias_divider_without_re_exits_2() -> None:
    result = run("bias", "divider", "--vcc", "12", "--r1", "47k", "--r2", "10k", "--rc", "2k2",
                 "--polarity", "npn", "--hfe", "100", "--vbe", "0.65")
    assert result.exit_code == 2
    assert "re:" in result.output


def test_bias_r1_with_fixed_network_exits_2() -> None:
    result = run("bias", "fixed", "--vcc", "12", "--rb", "470k", "--r1", "10k", "--rc", "2k2",
                 "--re", "0", "--polarity", "npn", "--hfe", "100", "--vbe", "0.65")
    assert result.exit_code == 2
    assert "r1:" in result.output


def test_pnp_may_take_a_negative_supply() -> None:
    args = ["bias", "fixed", "--rb", "470k", "--rc", "2k2", "--re", "0", "--polarity", "pnp",
            "--hfe", "100", "--vbe", "0.65", "--format", "json"]
    neg = run(*args, "--vcc", "-12V")
    pos = run(*args, "--vcc", "12V")
    assert neg.exit_code == 0 and pos.exit_code == 0
    assert json.loads(neg.output)["original"] == json.loads(pos.output)["original"]


def test_check_json_matches_library(db_with_parts: str) -> None:
    result = run("check", "XS558", "--vce", "6V", "--ic", "40mA", "--ambient", "50",
                 "--policy", "mil-std-975m", "--format", "json", db=db_with_parts)
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    from partsdb.derating import BUILTIN_POLICIES

    expected = check_operating_point(SI, 6.0, 0.04, ambient=50.0,
                                     policy=BUILTIN_POLICIES["mil-std-975m"])
    assert data["tj_estimate"] == pytest.approx(expected.tj_estimate)
    assert [lim["status"] for lim in data["limits"]] == [lim.status for lim in expected.limits]
    assert data["policy"]["name"] == "mil-std-975m"


def test_check_table_and_unknown_things(db_with_parts: str) -> None:
    ok = run("check", "XG71", "--vce", "6", "--ic", "10mA", db=db_with_parts)
    assert ok.exit_code == 0 and "Caution" in ok.output
    bad_policy = run("check", "XG71", "--vce", "6", "--ic", "10mA", "--policy", "nope",
                     db=db_with_parts)
    assert bad_policy.exit_code == 2
    assert "policy" in bad_policy.output and "nope" in bad_policy.output
    missing = run("check", "NOSUCH1", "--vce", "6", "--ic", "10mA", db=db_with_parts)
    assert missing.exit_code == 1


def test_spice_prints_model_card(db_with_parts: str) -> None:
    result = run("spice", "XS558", db=db_with_parts)
    assert result.exit_code == 0, result.output
    assert ".model XS558 PNP(" in result.output
    assert "TF=" in result.output
