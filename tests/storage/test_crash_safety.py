"""Crash safety: a process killed (SIGKILL) in the middle of a write leaves a sound database.

SIGKILL cannot be caught, so the process gets no chance to clean up: what remains is what the
database's own transactions guarantee (SQLite: "Atomic Commit In SQLite" and the WAL
documentation; PostgreSQL: a transaction without COMMIT is rolled back when its client goes).
After each kill the database is reopened and checked: SQLite's ``PRAGMA integrity_check``
says ``ok``, a killed import is wholly there or wholly absent, the ledger of every lot still
sums to its quantity, and moves (which only shift parts) left the total unchanged.
"""

from __future__ import annotations

import csv
import random
import sqlite3
import time
from pathlib import Path

import pytest
from sqlalchemy import func, select

from partsdb.services import stock
from partsdb.storage.database import open_database, resolve_url
from partsdb.storage.models import DeviceRow, LotRow
from tests.storage.workers import Worker, seed_shop, wait_until_alone

KILLS = 5
IMPORT_ROWS = 50_000


@pytest.fixture(scope="module")
def big_catalog(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """50,000 invented devices (designations QX00000...) in the import format."""
    path = tmp_path_factory.mktemp("catalog") / "devices.csv"
    with path.open("w", newline="") as handle:
        out = csv.writer(handle)
        out.writerow(["designation", "kind", "polarity", "material", "vceo", "ic_max", "ptot",
                      "ptot_ref", "hfe_min", "package"])
        for i in range(IMPORT_ROWS):
            out.writerow([f"QX{i:05d}", "bjt", "npn" if i % 2 else "pnp", "si", 20 + i % 200,
                          f"{0.1 + (i % 50) / 100:.3f}", f"{0.3 + (i % 30) / 10:.2f}", "ambient",
                          50 + i % 100, "TO-92"])
    return path


def _integrity_ok(url: str) -> None:
    resolved = resolve_url(url)
    if resolved.get_backend_name() != "sqlite":
        return
    conn = sqlite3.connect(resolved.database or "")
    try:
        assert conn.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
        assert conn.execute("PRAGMA foreign_key_check").fetchall() == []
    finally:
        conn.close()


def _ledger_holds(url: str) -> tuple[int, int]:
    """(devices, total stock) after checking every lot's ledger and sign."""
    db = open_database(url, notify=None)
    try:
        with db.session() as session:
            assert stock.ledger_mismatches(session) == []
            assert session.scalar(select(func.min(LotRow.quantity))) >= 0
            devices = session.scalar(select(func.count()).select_from(DeviceRow))
            total = session.scalar(select(func.sum(LotRow.quantity)))
    finally:
        db.dispose()
    return int(devices or 0), int(total or 0)


@pytest.mark.parametrize("kill", range(KILLS))
def test_import_killed_midway_is_all_or_nothing(db_url: str, big_catalog: Path, kill: int) -> None:
    db = open_database(db_url, notify=None)
    total_before = seed_shop(db)
    devices_before = 2
    db.dispose()

    worker = Worker(db_url, "import", str(big_catalog))
    worker.wait_for(lambda line: line == "inserting", timeout=60)
    # The insert phase lasts about a second; kill at a different point in it each run.
    time.sleep(random.Random(kill).uniform(0.0, 0.06) * kill)
    worker.kill()
    committed = "committed" in worker.seen
    wait_until_alone(db_url)

    _integrity_ok(db_url)
    devices, total = _ledger_holds(db_url)
    assert devices in (devices_before, devices_before + IMPORT_ROWS)  # never a part of the file
    if committed:
        assert devices == devices_before + IMPORT_ROWS
    assert total == total_before


@pytest.mark.parametrize("kill", range(KILLS))
def test_moves_killed_midway_keep_ledger_and_total(db_url: str, kill: int) -> None:
    db = open_database(db_url, notify=None)
    total_before = seed_shop(db)
    db.dispose()

    worker = Worker(db_url, "moves", str(kill))
    worker.wait_for(lambda line: line == "op 15", timeout=60)
    time.sleep(random.Random(kill).uniform(0.0, 0.08))
    worker.kill()
    wait_until_alone(db_url)

    _integrity_ok(db_url)
    _devices, total = _ledger_holds(db_url)
    assert total == total_before  # moves take out exactly what they put in
