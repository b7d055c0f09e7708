"""The foundation commands as a user runs them: exit codes, messages, JSON, nothing written on error.

Results are checked through the library (services), not by re-reading our own output.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from partsdb.cli import main
from partsdb.services import catalog, stock
from partsdb.storage.database import open_database

ADD = ["device", "add", "QK 55", "--kind", "bjt", "--polarity", "pnp", "--material", "ge",
       "--vceo", "32V", "--vcbo", "40V", "--ic-max", "150mA", "--ptot", "200mW",
       "--ptot-ref", "ambient", "--hfe-min", "40", "--hfe-max", "120", "--ft", "2MHz"]


@pytest.fixture
def run(db_url: str):  # type: ignore[no-untyped-def]
    runner = CliRunner()

    def invoke(*args: str):  # type: ignore[no-untyped-def]
        return runner.invoke(main, ["--quiet", "--db", db_url, *args], catch_exceptions=False)

    invoke.url = db_url  # type: ignore[attr-defined]
    return invoke


def test_device_add_show_json_in_si_units(run) -> None:  # type: ignore[no-untyped-def]
    assert run(*ADD).exit_code == 0
    result = run("device", "show", "qk-55", "--format", "json")
    assert result.exit_code == 0
    data = json.loads(result.output)
    assert data["vceo"] == 32.0 and data["ic_max"] == 0.15 and data["ft"] == 2e6
    assert data["ptot"] == 0.2 and data["icbo"] is None


def test_device_add_refuses_duplicate_key(run) -> None:  # type: ignore[no-untyped-def]
    run(*ADD)
    again = run(*[a if a != "QK 55" else "qk55" for a in ADD])
    assert again.exit_code == 2
    assert "already stored as 'QK 55'" in again.output


def test_device_add_bad_unit_exit_2_names_field(run) -> None:  # type: ignore[no-untyped-def]
    result = run(*[a if a != "32V" else "4O0V" for a in ADD])
    assert result.exit_code == 2
    assert "vceo" in result.output and "4O0V" in result.output
    db = open_database(run.url, notify=None)
    with db.session() as session:
        assert catalog.count_devices(session) == 0
    db.dispose()


def test_not_found_exit_1(run) -> None:  # type: ignore[no-untyped-def]
    run(*ADD)
    result = run("device", "show", "QK56")
    assert result.exit_code == 1
    assert "not found" in result.output and "QK 55" in result.output  # suggestion


def test_stock_take_too_many_changes_nothing(run) -> None:  # type: ignore[no-untyped-def]
    run(*ADD)
    assert run("stock", "receive", "QK55", "10", "--to", "C2/D14", "--create").exit_code == 0
    result = run("stock", "take", "QK55", "11", "--from", "C2/D14", "--job", "J-9")
    assert result.exit_code == 2
    assert "only 10 there" in result.output
    db = open_database(run.url, notify=None)
    with db.session() as session:
        assert [v.quantity for v in stock.where(session, "QK55")] == [10]
        assert [e.reason for e in stock.ledger(session)] == ["receive"]
    db.dispose()


def test_stock_where_json_and_ledger(run) -> None:  # type: ignore[no-untyped-def]
    run(*ADD)
    run("stock", "receive", "QK55", "10", "--to", "C2/D14", "--create")
    run("stock", "take", "QK55", "3", "--from", "C2/D14", "--job", "J-9")
    run("stock", "move", "QK55", "2", "--from", "C2/D14", "--to", "C1/D01", "--create")
    run("stock", "count", "QK55", "6", "--at", "C2/D14")
    data = json.loads(run("stock", "where", "QK55", "--format", "json").output)
    assert {(d["location"], d["quantity"]) for d in data} == {("C2/D14", 6), ("C1/D01", 2)}
    ledger = json.loads(run("stock", "ledger", "QK55", "--job", "J-9", "--format", "json").output)
    assert [(e["reason"], e["change"]) for e in ledger] == [("take", -3)]


def test_import_export_commands(run, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    src = tmp_path / "d.csv"
    src.write_text("designation,kind,polarity,material,vceo\nQK1,bjt,npn,si,40V\nQK2,bjt,npn,si,fast\n")
    bad = run("import", "devices", str(src))
    assert bad.exit_code == 2 and "line 3" in bad.output
    src.write_text("designation,kind,polarity,material,vceo\nQK1,bjt,npn,si,40V\n")
    assert run("import", "devices", str(src)).exit_code == 0
    out = tmp_path / "out.csv"
    assert run("export", "devices", str(out)).exit_code == 0
    assert "QK1" in out.read_text()


def test_every_command_has_help_text() -> None:
    # A command without help is a defect (and must be documented in the README).
    import click

    readme = (Path(__file__).parents[2] / "README.md").read_text(encoding="utf-8")

    def walk(cmd: click.Command, path: list[str]):  # type: ignore[no-untyped-def]
        yield path, cmd
        if isinstance(cmd, click.Group):
            for name, sub in cmd.commands.items():
                yield from walk(sub, [*path, name])

    for path, cmd in walk(main, []):
        if not path:
            continue
        assert (cmd.help or "").strip(), f"partsdb {' '.join(path)} has no help text"
        assert f"partsdb {path[0]}" in readme, f"partsdb {path[0]} is not in the README"
