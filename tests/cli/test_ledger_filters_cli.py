"""Ledger filters and low-stock counts from the CLI, checked through the services."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from partsdb.cli import main


@pytest.fixture
def run(tmp_path: Path):  # type: ignore[no-untyped-def]
    url = f"sqlite:///{tmp_path / 'shop.sqlite'}"

    def invoke(*args: str):  # type: ignore[no-untyped-def]
        return CliRunner().invoke(main, ["--quiet", "--db", url, *args])

    assert invoke("device", "add", "QK55", "--kind", "bjt", "--polarity", "pnp", "--material",
                  "ge", "--low-stock", "10").exit_code == 0
    assert invoke("device", "add", "QK56", "--kind", "bjt", "--polarity", "pnp", "--material",
                  "ge", "--low-stock", "2").exit_code == 0
    assert invoke("stock", "receive", "QK55", "3", "--to", "C1/D1", "--create").exit_code == 0
    assert invoke("stock", "receive", "QK55", "3", "--to", "C1/D2", "--create").exit_code == 0
    assert invoke("stock", "receive", "QK56", "5", "--to", "C1/D1", "--create").exit_code == 0
    for job in ("J-2611", "J-2612", "j_x", "K-1"):
        assert invoke("stock", "take", "QK56", "1", "--from", "C1/D1", "--job", job).exit_code == 0
    return invoke


@pytest.mark.parametrize(("job", "expected"), [
    ("j-26", ["J-2611", "J-2612"]),   # any case, by prefix
    ("J-2611", ["J-2611"]),
    ("J_", ["j_x"]),                  # "_" is a character here, not LIKE's wildcard
    ("j%", []),                       # nor "%"
    ("X", []),
])
def test_job_filter_is_a_case_insensitive_prefix(run, job: str, expected: list[str]) -> None:  # type: ignore[no-untyped-def]
    result = run("stock", "ledger", "--job", job, "--format", "json")
    assert result.exit_code == 0, result.output
    assert sorted(e["job"] for e in json.loads(result.output)) == expected


def test_low_counts_devices_not_lots(run) -> None:  # type: ignore[no-untyped-def]
    # QK55: two lots, 3 + 3 = 6 below its mark 10, counted once; QK56: 5 - 4 taken = 1 below
    # its mark 2. Two devices are low, held in three lots.
    items = json.loads(run("stock", "low", "--format", "json").output)
    assert sorted(i["designation"] for i in items) == ["QK55", "QK56"]
    table = run("stock", "low").output
    assert "2 devices" in table and "Devices, not lots" in table


def test_ledger_table_names_the_local_zone(run) -> None:  # type: ignore[no-untyped-def]
    from partsdb.clock import zone_name

    table = run("stock", "ledger").output
    assert "When (local)" in table and "stored in UTC" in table
    assert f" {zone_name()} " in table  # each time carries its zone
    entry = json.loads(run("stock", "ledger", "--format", "json", "--limit", "1").output)[0]
    assert entry["at"].endswith("+00:00")
