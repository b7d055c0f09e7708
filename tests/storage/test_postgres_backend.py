"""PostgreSQL as a first-class backend: the same commands, and ``partsdb copy`` between backends.

The oracle for a copy is the source database itself, read back row by row; for "the same
code on both backends" it is the same command sequence run on a SQLite file, whose exports
must equal those from the backend under test.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner
from sqlalchemy import func, select

from partsdb.cli import main
from partsdb.services import stock
from partsdb.services.demo import seed_dir
from partsdb.services.shop import TABLE_ORDER, shop_tables
from partsdb.storage.database import open_database
from partsdb.storage.models import DeviceRow, MovementRow
from tests.storage.workers import dump, fill_shop, seed_shop


def _cli(*args: str) -> object:
    return CliRunner().invoke(main, list(args))


@pytest.fixture
def bench(tmp_path: Path) -> tuple[str, dict[str, list[tuple[object, ...]]]]:
    """A filled SQLite shop (seed files, ledger history, a swap) and its full content."""
    url = f"sqlite:///{tmp_path / 'bench.sqlite'}"
    db = open_database(url, notify=None)
    fill_shop(db)
    content = dump(db)
    db.dispose()
    return url, content


def test_copy_there_and_back_keeps_every_row(bench: tuple[str, dict], db_url: str,
                                            tmp_path: Path) -> None:
    source, content = bench
    result = _cli("copy", "--from", source, "--to", db_url, "--format", "json")
    assert result.exit_code == 0, result.output
    report = json.loads(result.stdout)
    assert report["verified"] is True
    assert report["target_tally"]["rows"] == {t: len(content[t]) for t in TABLE_ORDER}
    target = open_database(db_url, notify=None)
    assert dump(target) == content
    target.dispose()

    back = f"sqlite:///{tmp_path / 'back.sqlite'}"
    result = _cli("copy", "--from", db_url, "--to", back)
    assert result.exit_code == 0, result.output
    assert "verified" in result.output
    for table in TABLE_ORDER:
        assert any(line.split() == [table, str(len(content[table])), str(len(content[table]))]
                   for line in result.output.splitlines()), table
    returned = open_database(back, notify=None)
    assert dump(returned) == content
    returned.dispose()


def test_copied_database_takes_new_rows(bench: tuple[str, dict], db_url: str) -> None:
    source, content = bench
    assert _cli("copy", "--from", source, "--to", db_url).exit_code == 0
    target = open_database(db_url, notify=None)
    with target.session() as session:
        stock.receive(session, "OC372", 3, "Annex/Shelf 1")  # new place, lot and ledger line
        newest = session.scalar(select(func.max(MovementRow.id)))
    assert newest == max(row[0] for row in content["movements"]) + 1
    with target.session() as session:
        assert stock.ledger_mismatches(session) == []
    target.dispose()


def test_copy_refuses_a_target_holding_data(bench: tuple[str, dict], db_url: str) -> None:
    source, content = bench
    target = open_database(db_url, notify=None)
    seed_shop(target)
    before = dump(target)
    result = _cli("copy", "--from", source, "--to", db_url)
    assert result.exit_code == 2
    assert "already holds data" in result.output and "--force" in result.output
    assert dump(target) == before
    forced = _cli("copy", "--from", source, "--to", db_url, "--force")
    assert forced.exit_code == 0, forced.output
    assert dump(target) == content
    target.dispose()


def test_copy_refuses_the_same_database(tmp_path: Path) -> None:
    url = f"sqlite:///{tmp_path / 'one.sqlite'}"
    assert _cli("--db", url, "init").exit_code == 0  # copy never creates its source
    result = _cli("copy", "--from", url, "--to", str(tmp_path / "one.sqlite"))
    assert result.exit_code == 2
    assert "same database" in result.output


def _workday(url: str, out: Path) -> list[str]:
    """One bench's day through the CLI; returns what the exports and queries printed."""
    seeds = seed_dir()
    steps = [
        ["import", "devices", str(seeds / "devices.csv")],
        ["import", "stock", str(seeds / "stock.csv")],
        ["stock", "receive", "OC372", "5", "--to", "Bench/Tray", "--create"],
        ["stock", "take", "OC372", "2", "--from", "Bench/Tray", "--job", "R-12"],
        ["stock", "move", "OC372", "3", "--from", "Bench/Tray", "--to", "Bench/Tray 2", "--create"],
        ["stock", "return", "OC372", "1", "--to", "Bench/Tray", "--create", "--job", "R-12"],
        ["stock", "take", "OC372", "50", "--from", "Bench/Tray"],  # refused: too few
        ["stock", "where", "OC372"],
        ["export", "devices", str(out / "devices.csv")],
        ["export", "stock", str(out / "stock.csv")],
    ]
    printed = []
    for step in steps:
        result = _cli("--db", url, "-q", *step)
        printed.append(f"{result.exit_code} {result.output.replace(str(out), '<out>')}")
    return printed


def test_same_commands_same_results_on_each_backend(db_url: str, tmp_path: Path) -> None:
    (tmp_path / "ref").mkdir()
    (tmp_path / "this").mkdir()
    reference = _workday(f"sqlite:///{tmp_path / 'ref.sqlite'}", tmp_path / "ref")
    here = _workday(db_url, tmp_path / "this")
    assert here == reference
    # Every step worked except the over-large take, refused (exit 2) on both.
    assert [line.split(" ", 1)[0] for line in reference] == ["0"] * 6 + ["2"] + ["0"] * 3
    for name in ("devices.csv", "stock.csv"):
        assert (tmp_path / "this" / name).read_text() == (tmp_path / "ref" / name).read_text()
    db = open_database(db_url, notify=None)
    with db.session() as session:
        assert session.scalar(select(func.count()).select_from(DeviceRow)) > 0
        assert stock.ledger_mismatches(session) == []
    assert [t.name for t in shop_tables()] == list(TABLE_ORDER)
    db.dispose()
