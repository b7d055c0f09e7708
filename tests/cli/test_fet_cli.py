"""`partsdb device add/show/list` with FET options (derived from device.FIELDS), and the bipolar
commands (check, bias, spice) refusing a FET with exit 2 in one line. Checked through the catalog
service; nothing is written on a refusal.

Expected values: hand conversions with SI prefixes (BIPM SI Brochure, 9th ed., table 7).
"""

from __future__ import annotations

import json

import pytest

from partsdb.services import catalog
from partsdb.storage.database import open_database

ADD_MOSFET = ["device", "add", "HX-N60T", "--kind", "mosfet", "--polarity", "n-channel",
              "--material", "si", "--vds", "60V", "--vgs-max", "±20V", "--id-max", "30A",
              "--id-max-ref", "case", "--ptot", "75W", "--ptot-ref", "case", "--rds-on", "28mΩ",
              "--rds-on-vgs", "10V", "--vgs-th-min", "2V", "--vgs-th-max", "4V", "--qg", "25nC",
              "--body-diode", "yes", "--package", "TO-220", "--pinout", "GDS"]
ADD_JFET = ["device", "add", "HX-J12", "--kind", "jfet", "--polarity", "n", "--material", "si",
            "--vds", "40V", "--vgs-off-min", "-0.5V", "--vgs-off-max", "-2.5V", "--idss-min",
            "2.6mA", "--idss-max", "6.5mA", "--yfs", "12mS", "--yfs-id", "3mA", "--en",
            "2nV/rtHz", "--package", "TO-92", "--pinout", "SGD"]


def test_fet_add_show_json_in_si_units(run) -> None:  # type: ignore[no-untyped-def]
    assert run(*ADD_MOSFET).exit_code == 0
    assert run(*ADD_JFET).exit_code == 0
    data = json.loads(run("device", "show", "hx-n60t", "--format", "json").output)
    # 28 mΩ = 0.028 Ω; 25 nC = 2.5e-8 C; ±20 V stored as the magnitude 20 V.
    assert (data["kind"], data["mode"], data["polarity"]) == ("mosfet", "enhancement", "n")
    assert data["rds_on"] == pytest.approx(0.028) and data["qg"] == pytest.approx(25e-9)
    assert data["vgs_max"] == 20.0
    assert data["body_diode"] is True and data["vceo"] is None
    jfet = json.loads(run("device", "show", "HX-J12", "--format", "json").output)
    assert (jfet["vgs_off_min"], jfet["vgs_off_max"]) == (-0.5, -2.5)
    assert jfet["idss_max"] == pytest.approx(6.5e-3) and jfet["en"] == pytest.approx(2e-9)
    assert jfet["body_diode"] is None
    table = run("device", "show", "HX-J12").output
    assert "N-channel" in table and "Vgs(off) min" in table
    # Cautions where a FET is shown: static on MOSFET gates, switch-mode primaries (common
    # practice; IEC 61340-5-1 for electrostatic protection).
    assert "static" in table and "primary side" in table
    assert any("static" in c for c in data["cautions"])


def test_list_by_kind_shows_fet_columns(run) -> None:  # type: ignore[no-untyped-def]
    run(*ADD_MOSFET)
    run(*ADD_JFET)
    out = run("device", "list", "--kind", "jfet").output
    assert "HX-J12" in out and "HX-N60T" not in out
    assert "NJFET" in out and "2.6-6.5mA" in out  # the Idss window in the figure column
    out = run("device", "list", "--polarity", "n").output
    assert "NMOS" in out and "28mΩ" in out and "HX-J12" in out


def test_a_bad_fet_add_exits_2_in_one_line_and_writes_nothing(run) -> None:  # type: ignore[no-untyped-def]
    bad = [a if a != "-0.5V" else "0.5V" for a in ADD_JFET]
    result = run(*bad)
    assert result.exit_code == 2
    assert result.output.strip().count("\n") == 0
    assert "vgs_off_min" in result.output and "expected Vgs(off) negative" in result.output
    bipolar_field = run(*ADD_MOSFET, "--hfe-min", "100")
    assert bipolar_field.exit_code == 2 and "hfe_min: a bipolar field" in bipolar_field.output
    db = open_database(run.url, notify=None)
    with db.session() as session:
        assert catalog.count_devices(session) == 0
    db.dispose()


def test_bipolar_commands_refuse_a_fet_with_exit_2(run) -> None:  # type: ignore[no-untyped-def]
    run(*ADD_MOSFET)
    # `spice` writes a FET card now (tests/cli/test_fet_circuit_cli.py); the bipolar options
    # of check and the bipolar networks of bias still refuse a FET.
    for args in (("check", "HX-N60T", "--vce", "9V", "--ic", "20mA"),
                 ("bias", "divider", "--vcc", "12V", "--r1", "47k", "--r2", "10k", "--rc", "2k2",
                  "--re", "1k", "--device", "HX-N60T")):
        result = run(*args)
        assert result.exit_code == 2, args
        assert "HX-N60T: not a bipolar part (N-channel mosfet)" in result.output
        assert "Traceback" not in result.output


def test_a_workshop_sheet_with_datasheet_fet_headers(run, tmp_path) -> None:  # type: ignore[no-untyped-def]
    """Headers as datasheet tables print them ("VDS", "ID", "Rds(on) (mΩ)", "IDSS (mA)",
    "Vgs(off)", "gfs (mS)") map to the FET fields; bare numbers take the header's unit
    (hand conversions: 28 mΩ = 0.028 Ω, 6.5 mA = 0.0065 A, 12 mS = 0.012 S)."""
    sheet = tmp_path / "fets.csv"
    sheet.write_text(
        "Type;Kind;Channel;Material;VDS;ID;Rds(on) (mΩ);Rds(on) at Vgs;IDSS (mA);Idss max (mA);"
        "Vgs(off);Vgs(off) max;gfs (mS)\n"
        "HX-N70;mosfet;N-ch;si;60;30;28;10;;;;;\n"
        "HX-J70;jfet;n;si;40;;;;2.6;6.5;-0.5;-2.5;12\n", encoding="utf-8")
    result = run("import", str(sheet))
    assert result.exit_code == 0, result.output
    mos = json.loads(run("device", "show", "HX-N70", "--format", "json").output)
    assert mos["rds_on"] == pytest.approx(0.028) and mos["id_max"] == 30.0
    assert mos["polarity"] == "n" and mos["vds"] == 60.0
    jfet = json.loads(run("device", "show", "HX-J70", "--format", "json").output)
    assert jfet["idss_min"] == pytest.approx(2.6e-3) and jfet["idss_max"] == pytest.approx(6.5e-3)
    assert jfet["vgs_off_min"] == -0.5 and jfet["yfs"] == pytest.approx(0.012)


def test_substitute_for_a_fet_original_ranks_fets_only(run) -> None:  # type: ignore[no-untyped-def]
    """A FET original goes to the FET ranking (issue 19); the bipolar spec options are refused
    for it in one line."""
    run(*ADD_MOSFET)
    run(*ADD_JFET)
    result = run("substitute", "HX-N60T", "--show-rejected")
    assert result.exit_code == 0 and "Traceback" not in result.output
    assert "HX-J12" in result.output and "incompatible" in result.output
    refused = run("substitute", "HX-N60T", "--vceo", "60V")
    assert refused.exit_code == 2
    assert "requirement options apply to bipolar originals" in refused.output
