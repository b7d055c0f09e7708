"""`partsdb import FILE`: the parts-sheet import from the command line (both backends through
``run``). Part names are invented; the sheet is the one described in issue 15."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

SHEET = ("Type;Polarity;Vce (V);Ic (mA);hFE;Case;Drawer;Qty\n"
         "QY 501;NPN;45;100;110;TO92;A1/D01;25\n"
         "QY 501;NPN;45;100;110;TO92;A1/D02;5\n"
         "QY 502;PNP;60;1500;40;TO-126;B2/D03;4\n")


@pytest.fixture
def sheet(tmp_path: Path) -> Path:
    path = tmp_path / "parts.csv"
    path.write_text(SHEET, encoding="cp1252")
    return path


def test_import_file_without_a_subcommand(run, sheet: Path) -> None:  # type: ignore[no-untyped-def]
    result = run("import", str(sheet))
    assert result.exit_code == 0, result.output
    assert "devices: 2 added, 0 updated, 0 unchanged; lots: 3 added" in result.output
    assert "assumed: line 4: QY 502: ptot_ref case (TO-126, common practice)" in result.output
    again = run("import", str(sheet))
    assert "devices: 0 added, 0 updated, 2 unchanged; lots: 0 added, 0 updated, 3 unchanged" \
        in again.output
    shown = run("device", "show", "QY 501", "--format", "json")
    assert json.loads(shown.stdout)["ic_max"] == pytest.approx(0.1)  # 100 mA
    # the old subcommands stay
    assert run("import", "stock", "--help").exit_code == 0


def test_dry_run_writes_nothing_and_json_lists_rows(run, sheet: Path) -> None:  # type: ignore[no-untyped-def]
    result = run("import", str(sheet), "--dry-run", "--format", "json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    assert {k: len(data[k]) for k in ("added", "updated", "unchanged", "warnings", "errors")} == \
        {"added": 5, "updated": 0, "unchanged": 0, "warnings": 0, "errors": 0}
    assert [r["line"] for r in data["added"] if r["what"] == "lot"] == [2, 3, 4]
    listed = run("device", "list", "--format", "json")
    assert json.loads(listed.stdout) == []


def test_bad_rows_are_listed_and_nothing_is_written(run, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    path = tmp_path / "bad.csv"
    path.write_text("Type,Polarity,Vce,Drawer,Qty\nQY1,npn,45,A/1,3\nQY2,xnp,45,A/2,4\n"
                    "QY3,npn,fast,A/3,-1\n")
    result = run("import", str(path))
    assert result.exit_code == 2
    assert "line 3: polarity: 'xnp' is not valid" in result.output
    assert "line 4: vceo: 'fast' is not valid" in result.output
    data = json.loads(run("import", str(path), "--format", "json").stdout)
    assert [(e["line"], e["column"]) for e in data["errors"]] == \
        [(3, "polarity"), (4, "vceo"), (4, "quantity")]
    header = json.loads(run("import", str(path), "--format", "json", "--map", "Vce=nothing").stdout)
    assert header["errors"][0]["line"] == 1 and "'nothing' is not a known field" in \
        header["errors"][0]["message"]
    assert json.loads(run("device", "list", "--format", "json").stdout) == []


def test_unknown_column_map_ignore_and_profile(run, tmp_path: Path, monkeypatch) -> None:  # type: ignore[no-untyped-def]
    path = tmp_path / "own.csv"
    path.write_text("Art,Pol,Sperrspannung,Preis\nQY7,npn,45,0.10\n")
    refused = run("import", str(path))
    assert refused.exit_code == 2
    assert "column 'Art' matches no field" in refused.output
    assert "--ignore-unknown" in refused.output
    ok = run("import", str(path), "--map", "Art=designation", "--map", "Sperrspannung=vceo",
             "--ignore", "Preis", "--dry-run")
    assert ok.exit_code == 0, ok.output
    config = tmp_path / "config.toml"
    config.write_text('[import.profiles.werkstatt]\n'
                      'map = { "Art" = "designation", "Sperrspannung" = "vceo" }\n'
                      'ignore = ["Preis"]\n')
    monkeypatch.setenv("PARTSDB_CONFIG", str(config))
    assert run("import", str(path), "--profile", "werkstatt").exit_code == 0
    missing = run("import", str(path), "--profile", "other")
    assert missing.exit_code == 2 and "known profiles: werkstatt" in missing.output
    config.write_text('[import.profiles.werkstatt]\nmapping = { "Art" = "designation" }\n')
    bad = run("import", str(path), "--profile", "werkstatt")
    assert bad.exit_code == 2 and "import.profiles.werkstatt.mapping: unknown key" in bad.output


def test_unit_option_and_bad_option_values(run, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    path = tmp_path / "u.csv"
    path.write_text("Type,Polarity,Ic\nQY9,npn,150\n")
    warned = run("import", str(path), "--dry-run")
    assert "ic_max: 150 A? if the column is in mA, use --unit ic_max=mA" in warned.output
    assert run("import", str(path), "--unit", "ic_max=mA").exit_code == 0
    shown = run("device", "show", "QY9", "--format", "json")
    assert json.loads(shown.stdout)["ic_max"] == pytest.approx(0.150)
    bad = run("import", str(path), "--unit", "ic_max")
    assert bad.exit_code == 2 and "--unit: 'ic_max' is not valid; expected" in bad.output
