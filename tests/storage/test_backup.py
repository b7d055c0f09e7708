"""Backup and restore: a consistent copy while others write, and an exact round trip.

"Exact" is checked row by row over every table (ids, text, NULLs, floats, timestamps), so the
oracle is the database's own earlier content, read back through SQLAlchemy. Consistency of a
backup taken under concurrent moves is checked by bookkeeping identities on the copy: every
lot's ledger sums to its quantity and moves left the total unchanged.
"""

from __future__ import annotations

import zipfile
from pathlib import Path

import pytest
from click.testing import CliRunner
from sqlalchemy import delete, insert, select, update

from partsdb.cli import main
from partsdb.services import shop, stock
from partsdb.storage.database import open_database
from partsdb.storage.models import DeviceRow, LocationRow, LotRow, SwapRow
from tests.storage.workers import Worker, dump, fill_shop, seed_shop, wait_until_alone


def _cli(*args: str) -> object:
    return CliRunner().invoke(main, list(args))


def _damage(url: str) -> None:
    db = open_database(url, notify=None)
    with db.session() as session:
        session.execute(update(LotRow).values(quantity=LotRow.quantity + 1))
        session.execute(delete(SwapRow))
        session.execute(update(DeviceRow).where(DeviceRow.id == 1).values(notes="scribbled"))
        session.execute(insert(LocationRow).values(name="junk", path="junk"))
    db.dispose()


@pytest.mark.parametrize("fmt", ["auto", "zip"])
def test_backup_damage_restore_gives_identical_content(db_url: str, tmp_path: Path, fmt: str) -> None:
    db = open_database(db_url, notify=None)
    fill_shop(db)
    original = dump(db)
    db.dispose()
    dest = tmp_path / ("shop.zip" if fmt == "zip" else "shop.backup")

    made = _cli("--db", db_url, "backup", str(dest), "--format", fmt)
    assert made.exit_code == 0, made.output
    assert dest.is_file()
    _damage(db_url)

    refused = _cli("--db", db_url, "restore", str(dest))
    assert refused.exit_code == 2
    assert "--force" in refused.output
    db = open_database(db_url, notify=None)
    assert dump(db) != original  # still the damaged content: the refusal changed nothing
    db.dispose()

    restored = _cli("--db", db_url, "restore", "--force", str(dest))
    assert restored.exit_code == 0, restored.output
    db = open_database(db_url, notify=None)
    assert dump(db) == original
    with db.session() as session:
        assert stock.ledger_mismatches(session) == []
        # New rows get fresh ids after a restore (PostgreSQL sequences moved past the data).
        view = stock.receive(session, "OC372", 2, "New/Shelf")
        assert view.quantity == 2
    db.dispose()


def test_backup_refuses_to_overwrite_without_force(tmp_path: Path) -> None:
    url = f"sqlite:///{tmp_path / 'shop.sqlite'}"
    db = open_database(url, notify=None)
    seed_shop(db)
    db.dispose()
    dest = tmp_path / "b.sqlite"
    dest.write_bytes(b"keep me")
    result = _cli("--db", url, "backup", str(dest))
    assert result.exit_code == 2
    assert "exists" in result.output
    assert dest.read_bytes() == b"keep me"
    assert _cli("--db", url, "backup", "--force", str(dest)).exit_code == 0
    assert dest.read_bytes().startswith(b"SQLite format 3\x00")
    itself = _cli("--db", url, "backup", "--force", str(tmp_path / "shop.sqlite"))
    assert itself.exit_code == 2 and "a file of the open database" in itself.output


def test_backup_while_moves_run_is_consistent(db_url: str, tmp_path: Path) -> None:
    db = open_database(db_url, notify=None)
    total = seed_shop(db)
    worker = Worker(db_url, "moves", "7")
    try:
        worker.wait_for(lambda line: line == "op 5")
        backups = []
        for i in range(3):
            done_before = len(worker.seen)
            # On SQLite both kinds: the online backup API and the zip read in one snapshot.
            kind = "zip" if i == 1 else "auto"
            backups.append(shop.backup(db, tmp_path / f"b{i}", fmt=kind).path)
            worker.wait_for(lambda line, n=done_before: line == f"op {n + 5}")
    finally:
        worker.kill()
    db.dispose()
    wait_until_alone(db_url)
    assert len({p.read_bytes() for p in backups}) == 3  # the shop really changed between them
    for i, path in enumerate(backups):
        copy = open_database(tmp_path / f"check{i}.sqlite", notify=None)
        shop.restore(copy, path)
        with copy.session() as session:
            assert stock.ledger_mismatches(session) == []
            assert sum(session.scalars(select(LotRow.quantity))) == total
        copy.dispose()


def test_damaged_archive_is_refused(tmp_path: Path) -> None:
    url = f"sqlite:///{tmp_path / 'shop.sqlite'}"
    db = open_database(url, notify=None)
    seed_shop(db)
    db.dispose()
    good = tmp_path / "good.zip"
    assert _cli("--db", url, "backup", "--format", "zip", str(good)).exit_code == 0
    bad = tmp_path / "bad.zip"
    with zipfile.ZipFile(good) as src, zipfile.ZipFile(bad, "w") as dst:
        for item in src.infolist():
            data = src.read(item)
            if item.filename == "lots.csv":
                data = data.replace(b",15,", b",16,", 1)  # one quantity altered
            dst.writestr(item, data)
    target = f"sqlite:///{tmp_path / 'target.sqlite'}"
    result = _cli("--db", target, "restore", str(bad))
    assert result.exit_code == 2
    assert "lots.csv" in result.output and "damaged" in result.output
    check = open_database(target, notify=None)
    assert all(rows == [] for rows in dump(check).values())
    check.dispose()


def test_sqlite_backup_restores_into_either_backend(db_url: str, tmp_path: Path) -> None:
    source = open_database(tmp_path / "bench.sqlite", notify=None)
    fill_shop(source)
    original = dump(source)
    report = shop.backup(source, tmp_path / "bench.backup")
    source.dispose()
    assert report.format == "sqlite" and report.tally.rows["devices"] == len(original["devices"])
    target = open_database(db_url, notify=None)
    shop.restore(target, report.path)
    assert dump(target) == original
    target.dispose()


def test_restore_refuses_a_file_that_is_no_backup(tmp_path: Path) -> None:
    url = f"sqlite:///{tmp_path / 'shop.sqlite'}"
    stray = tmp_path / "notes.txt"
    stray.write_text("designation,kind\n")
    result = _cli("--db", url, "restore", str(stray))
    assert result.exit_code == 2
    assert "neither a partsdb zip backup nor a SQLite file" in result.output
