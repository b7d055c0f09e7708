"""`partsdb device`: add, show, duplicates, bad units, not found; checked through the catalog
service, and nothing written on error."""

from __future__ import annotations

import json

from partsdb.services import catalog
from partsdb.storage.database import open_database
from tests.cli.conftest import ADD_QK55


def test_device_add_show_json_in_si_units(run) -> None:  # type: ignore[no-untyped-def]
    assert run(*ADD_QK55).exit_code == 0
    result = run("device", "show", "qk-55", "--format", "json")
    assert result.exit_code == 0
    data = json.loads(result.output)
    assert data["vceo"] == 32.0 and data["ic_max"] == 0.15 and data["ft"] == 2e6
    assert data["ptot"] == 0.2 and data["icbo"] is None

def test_device_add_refuses_duplicate_key(run) -> None:  # type: ignore[no-untyped-def]
    run(*ADD_QK55)
    again = run(*[a if a != "QK 55" else "qk55" for a in ADD_QK55])
    assert again.exit_code == 2
    assert "already stored as 'QK 55'" in again.output

def test_device_add_bad_unit_exit_2_names_field(run) -> None:  # type: ignore[no-untyped-def]
    result = run(*[a if a != "32V" else "4O0V" for a in ADD_QK55])
    assert result.exit_code == 2
    assert "vceo" in result.output and "4O0V" in result.output
    db = open_database(run.url, notify=None)
    with db.session() as session:
        assert catalog.count_devices(session) == 0
    db.dispose()

def test_not_found_exit_1(run) -> None:  # type: ignore[no-untyped-def]
    run(*ADD_QK55)
    result = run("device", "show", "QK56")
    assert result.exit_code == 1
    assert "not found" in result.output and "QK 55" in result.output  # suggestion
