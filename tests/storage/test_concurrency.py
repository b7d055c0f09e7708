"""No lost updates: several OS processes take, return and move parts on the same lots at once.

The invariants checked are bookkeeping identities, not invented numbers: a lot's quantity is
its opening count plus the sum of its ledger (double-entry bookkeeping: every change is a
ledger line), no lot goes below zero, a move takes out exactly what it puts in, and every
operation a worker saw succeed (or refused) appears (or does not appear) in the ledger.
On SQLite a locked database is waited for (busy timeout) and, when it stays locked, reported
in one line; on PostgreSQL deadlocks between crossing moves are re-run (SQLSTATE 40P01).
"""

from __future__ import annotations

import json
import sqlite3
import threading
import time
from pathlib import Path

import pytest
from click.testing import CliRunner
from sqlalchemy import func, select

from partsdb.cli import main
from partsdb.services import corrections, stock
from partsdb.storage.database import open_database
from partsdb.storage.models import LotRow, MovementRow
from tests.storage.workers import Worker, seed_shop

PROCESSES = 4
OPERATIONS = 250


@pytest.mark.slow  # measured 5-12 s per backend on a 2-core machine: 4 x 250 ORM transactions
def test_no_lost_updates_between_processes(db_url: str) -> None:
    db = open_database(db_url, notify=None)
    initial_total = seed_shop(db)
    with db.session() as session:
        opening_entries = session.scalar(select(func.count()).select_from(MovementRow))

    workers = [Worker(db_url, "ops", str(seed), str(OPERATIONS), "--wait")
               for seed in range(PROCESSES)]
    for w in workers:
        w.wait_for(lambda line: line == "ready")
    for w in workers:  # released together so their transactions overlap
        w.go()
    tallies = [json.loads(w.finish(timeout=150)) for w in workers]

    errors = [e for t in tallies for e in t["errors"]]
    assert errors == []
    total = {key: sum(t[key] for t in tallies) for key in tallies[0] if key != "errors"}
    assert (total["take_ok"] + total["take_refused"] + total["return_ok"] + total["move_ok"]
            + total["move_refused"]) == PROCESSES * OPERATIONS
    # The scenario must exercise both paths, or the refusal check below proves nothing.
    assert total["take_refused"] > 0 and total["take_ok"] > 0

    with db.session() as session:
        assert stock.ledger_mismatches(session) == []
        quantities = list(session.scalars(select(LotRow.quantity)))
        assert min(quantities) >= 0
        by_reason = {reason: (int(n), int(s or 0)) for reason, n, s in session.execute(
            select(MovementRow.reason, func.count(), func.sum(MovementRow.change))
            .group_by(MovementRow.reason))}
        moved_in = session.scalar(select(func.coalesce(func.sum(MovementRow.change), 0))
                                  .where(MovementRow.reason == "move", MovementRow.change > 0))
        entries = session.scalar(select(func.count()).select_from(MovementRow))
    db.dispose()

    # Each success is exactly one ledger line (two for a move); a refusal writes none.
    assert by_reason.get("take", (0, 0)) == (total["take_ok"], -total["taken"])
    assert by_reason.get("return", (0, 0)) == (total["return_ok"], total["returned"])
    assert by_reason.get("move", (0, 0)) == (2 * total["move_ok"], 0)  # moves conserve stock
    assert moved_in == total["moved"]
    assert entries == opening_entries + total["take_ok"] + total["return_ok"] + 2 * total["move_ok"]
    assert sum(quantities) == initial_total - total["taken"] + total["returned"]


def _hold_write_lock(path: Path, seconds: float, holding: threading.Event) -> None:
    conn = sqlite3.connect(path, isolation_level=None)
    conn.execute("BEGIN IMMEDIATE")  # takes the write lock, as another writer would
    holding.set()
    time.sleep(seconds)
    conn.execute("ROLLBACK")
    conn.close()


def _locked_shop(tmp_path: Path) -> str:
    url = f"sqlite:///{tmp_path / 'shop.sqlite'}"
    db = open_database(url, notify=None)
    seed_shop(db)
    db.dispose()
    return url


def test_sqlite_lock_is_waited_for(tmp_path: Path) -> None:
    url = _locked_shop(tmp_path)
    holding = threading.Event()
    holder = threading.Thread(target=_hold_write_lock,
                              args=(tmp_path / "shop.sqlite", 0.5, holding))
    holder.start()
    holding.wait(5)
    started = time.monotonic()
    result = CliRunner().invoke(main, ["--db", url, "stock", "take", "ZT101", "2", "--from",
                                       "K1/A1"])
    waited = time.monotonic() - started
    holder.join()
    assert result.exit_code == 0, result.output
    assert waited >= 0.3  # it did wait for the lock rather than fail at once
    db = open_database(url, notify=None)
    with db.session() as session:
        assert {v.location: v.quantity for v in stock.where(session, "ZT101")}["K1/A1"] == 13
    db.dispose()


def test_sqlite_lock_that_persists_is_one_clear_line(tmp_path: Path,
                                                    monkeypatch: pytest.MonkeyPatch) -> None:
    url = _locked_shop(tmp_path)
    monkeypatch.setattr("partsdb.storage.database.SQLITE_BUSY_TIMEOUT_MS", 1000)
    holding = threading.Event()
    holder = threading.Thread(target=_hold_write_lock,
                              args=(tmp_path / "shop.sqlite", 2.0, holding))
    holder.start()
    holding.wait(5)
    result = CliRunner().invoke(main, ["--db", url, "stock", "take", "ZT101", "2", "--from",
                                       "K1/A1"])
    holder.join()
    assert result.exit_code == 3, result.output
    assert isinstance(result.exception, SystemExit)  # a message, not a traceback
    assert "busy" in result.output and "nothing was changed" in result.output
    assert "Traceback" not in result.output
    db = open_database(url, notify=None)
    with db.session() as session:
        assert {v.location: v.quantity for v in stock.where(session, "ZT101")}["K1/A1"] == 15
    db.dispose()


@pytest.mark.postgres
def test_postgres_deadlock_is_run_again(pg_url: str) -> None:
    """Two transactions lock two lots in opposite order: PostgreSQL aborts one of them with
    SQLSTATE 40P01 (PostgreSQL docs, "Explicit Locking: Deadlocks"); ``transact`` re-runs it."""
    from collections import Counter

    from sqlalchemy import update

    db = open_database(pg_url, notify=None)
    seed_shop(db)
    with db.session() as session:
        first, second = list(session.scalars(select(LotRow.id).order_by(LotRow.id).limit(2)))
    both_hold_one = threading.Barrier(2)
    runs: Counter[str] = Counter()
    failures: list[BaseException] = []

    def bump(name: str, order: tuple[int, int]) -> None:
        def work(session) -> None:  # type: ignore[no-untyped-def]
            runs[name] += 1
            for step, lot in enumerate(order):
                session.execute(update(LotRow).where(LotRow.id == lot)
                                .values(quantity=LotRow.quantity + 1))
                if step == 0 and runs[name] == 1:
                    both_hold_one.wait(timeout=10)
        try:
            db.transact(work)
        except BaseException as err:  # reported below; a thread cannot fail the test itself
            failures.append(err)

    threads = [threading.Thread(target=bump, args=("ab", (first, second))),
               threading.Thread(target=bump, args=("ba", (second, first)))]
    for t in threads:
        t.start()
    for t in threads:
        t.join(timeout=60)
    assert failures == []
    assert sorted(runs.values()) == [1, 2]  # exactly one victim, run a second time
    with db.session() as session:
        quantities = dict(session.execute(select(LotRow.id, LotRow.quantity)
                                          .where(LotRow.id.in_([first, second]))).all())
    db.dispose()
    assert quantities == {first: 17, second: 17}  # both transactions counted once each


def test_one_movement_is_undone_once_when_benches_race(db_url: str) -> None:
    """Four benches undo the same movement at the same moment: exactly one compensating entry
    is written (the unique ``undoes`` link); the others are refused in one line."""
    db = open_database(db_url, notify=None)
    seed_shop(db)
    with db.session() as session:
        lot = stock.lots_at(session, None)[0]
        stock.take(session, lot.designation, 1, lot.location, lot.condition)
    with db.session() as session:
        target = stock.ledger(session, limit=1)[0]  # the take: undoing it can never run short
    start = threading.Barrier(4)
    outcomes: list[str] = []

    def bench() -> None:
        other = open_database(db_url, notify=None)
        start.wait()
        try:
            other.transact(lambda session: corrections.undo(session, target.id))
            outcomes.append("ok")
        except stock.StockError as err:
            outcomes.append("refused" if "undone" in str(err) else f"other: {err}")
        except Exception as err:  # anything else is the failure the assert shows
            outcomes.append(f"error: {err}")
        finally:
            other.dispose()

    threads = [threading.Thread(target=bench) for _ in range(4)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(60)
    assert sorted(outcomes) == ["ok", "refused", "refused", "refused"], outcomes
    with db.session() as session:
        undos = [e for e in stock.ledger(session) if e.undoes == target.id]
        assert len(undos) == 1 and undos[0].change == -target.change
        assert stock.ledger_mismatches(session) == []
    db.dispose()
