"""Worker processes for the concurrency, crash-safety and backup tests, and their shared setup.

Run as ``python tests/storage/workers.py COMMAND ...`` with the database URL in ``$PARTSDB_DB``
(kept out of the argument list, where a password would show in ``ps``). Each worker prints
``ready``, waits for a line on stdin when asked to (so that several start together), and
reports progress as single flushed lines; the last line of ``ops`` is a JSON tally.

Commands:
  ops SEED N [--wait]   N random take / return / move operations on the shop's lots
  moves SEED            moves between the shop's lots until killed, printing ``op K`` per commit
  import CSV            one all-or-nothing device import, printing ``inserting`` at the first
                        INSERT and ``committed`` after the commit
"""

from __future__ import annotations

import json
import random
import sys
from pathlib import Path
from typing import Any

DESIGNATIONS = ("ZT101", "ZT202")
"""Invented designations for the shared lots."""
PLACES = ("K1/A1", "K1/A2", "K2/B1")
INITIAL = 15
"""Parts per lot at the start: few, so that takes run the lots dry and get refused."""


def seed_shop(db: Any, initial: int = INITIAL) -> int:
    """Two invented devices, each with a lot in every place; returns the total stock."""
    from partsdb.services import catalog, stock

    with db.session() as session:
        for i, designation in enumerate(DESIGNATIONS):
            catalog.add_device(session, {
                "designation": designation, "kind": "bjt", "polarity": "npn" if i == 0 else "pnp",
                "material": "si", "vceo": "45V", "ic_max": "100mA", "ptot": "500mW",
                "ptot_ref": "ambient", "package": "TO-92"})
            for place in PLACES:
                stock.receive(session, designation, initial, place)
    return initial * len(DESIGNATIONS) * len(PLACES)


TRICKY_TEXT = ("", "\\N", "\\back\\slash", "two\nlines, \"quoted\"", "Ω µA °C", "=1+2", None)
"""Notes that a careless export would mangle: empty vs NULL, the NULL marker itself, quotes."""


def fill_shop(db: Any) -> None:
    """The demo seed files imported through the normal importer, plus some ledger history, a
    swap record, awkward text and floats whose shortest decimal form is long."""
    from sqlalchemy import select, update

    from partsdb.services import exchange, stock
    from partsdb.services.demo import seed_dir
    from partsdb.storage.models import DeviceRow, SwapRow

    seeds = seed_dir()
    with db.session() as session:
        exchange.import_devices(session, seeds / "devices.csv")
        exchange.import_stock(session, seeds / "stock.csv")
    with db.session() as session:
        lots = stock.lots_at(session, None)
        for view in lots[:12]:
            if view.quantity >= 2:
                stock.take(session, view.designation, 1, view.location, view.condition, job="R-7")
                stock.move(session, view.designation, 1, view.location, "Z9/Spare",
                           view.condition)
        ids = list(session.scalars(select(DeviceRow.id).order_by(DeviceRow.id).limit(10)))
        for ident, note in zip(ids, TRICKY_TEXT, strict=False):
            session.execute(update(DeviceRow).where(DeviceRow.id == ident).values(notes=note))
        session.execute(update(DeviceRow).where(DeviceRow.id == ids[-1])
                        .values(icbo=(0.1 + 0.2) * 1e-6, hfe_ic=0.1 + 0.2))
        session.add(SwapRow(original="OC372", original_key="OC372", substitute="ZT101",
                            substitute_key="ZT101", job="R-7", outcome="worked", vce_peak=12.5,
                            power=0.125, note="\\N"))


def dump(db: Any) -> dict[str, list[tuple[Any, ...]]]:
    """Every row of every table, by id: equal dumps mean identical content."""
    from sqlalchemy import select

    from partsdb.services.shop import shop_tables

    with db.engine.connect() as conn:
        return {t.name: [tuple(r) for r in conn.execute(select(t).order_by(t.c.id))]
                for t in shop_tables()}


def say(line: str) -> None:
    sys.stdout.write(line + "\n")
    sys.stdout.flush()


def _open() -> Any:
    from partsdb.storage.database import open_database

    return open_database(None, notify=None)


def run_ops(seed: int, n: int, wait: bool) -> dict[str, Any]:
    """N random operations; every outcome counted so the test can compare with the ledger."""
    from partsdb.services import stock
    from partsdb.storage.database import DatabaseError

    db = _open()
    rng = random.Random(seed)
    tally: dict[str, Any] = {"take_ok": 0, "take_refused": 0, "taken": 0, "return_ok": 0,
                             "returned": 0, "move_ok": 0, "move_refused": 0, "moved": 0,
                             "runs": 0, "errors": []}
    say("ready")
    if wait:
        sys.stdin.readline()

    def counted(work: Any) -> Any:
        def run(session: Any) -> Any:
            tally["runs"] += 1  # more runs than operations: transactions re-run after a deadlock
            return work(session)
        return run

    for _ in range(n):
        designation = rng.choice(DESIGNATIONS)
        place, other = rng.sample(PLACES, 2)
        qty = rng.randint(1, 6)
        roll = rng.random()
        try:
            if roll < 0.40:
                try:
                    db.transact(counted(lambda s, d=designation, p=place, q=qty:
                                        stock.take(s, d, q, p, job="J-1")))
                except stock.StockError:
                    tally["take_refused"] += 1
                else:
                    tally["take_ok"] += 1
                    tally["taken"] += qty
            elif roll < 0.65:
                db.transact(counted(lambda s, d=designation, p=place, q=qty:
                                    stock.return_parts(s, d, q, p, job="J-1")))
                tally["return_ok"] += 1
                tally["returned"] += qty
            else:
                try:
                    db.transact(counted(lambda s, d=designation, p=place, o=other, q=qty:
                                        stock.move(s, d, q, p, o)))
                except stock.StockError:
                    tally["move_refused"] += 1
                else:
                    tally["move_ok"] += 1
                    tally["moved"] += qty
        except DatabaseError as err:  # must not happen: the test fails and shows the message
            tally["errors"].append(str(err))
    db.dispose()
    return tally


def run_moves(seed: int) -> None:
    from partsdb.services import stock

    db = _open()
    rng = random.Random(seed)
    say("ready")
    done = 0
    while True:
        designation = rng.choice(DESIGNATIONS)
        place, other = rng.sample(PLACES, 2)
        qty = rng.randint(1, 4)
        try:
            db.transact(lambda s, d=designation, p=place, o=other, q=qty:
                        stock.move(s, d, q, p, o))
        except stock.StockError:
            continue
        done += 1
        say(f"op {done}")


def run_import(csv_path: str) -> None:
    from sqlalchemy import event

    from partsdb.services import exchange

    db = _open()
    frame = exchange.read_csv(csv_path)
    seen = {"insert": False}

    def announce(_conn: Any, _cursor: Any, statement: str, *_args: Any) -> None:
        if not seen["insert"] and statement.lstrip().upper().startswith("INSERT INTO DEVICES"):
            seen["insert"] = True
            say("inserting")

    event.listen(db.engine, "after_cursor_execute", announce)
    say("ready")
    with db.session() as session:
        exchange.import_devices(session, frame=frame)
    say("committed")
    db.dispose()


def main(argv: list[str]) -> int:
    command = argv[0]
    if command == "ops":
        say(json.dumps(run_ops(int(argv[1]), int(argv[2]), "--wait" in argv)))
    elif command == "moves":
        run_moves(int(argv[1]))
    elif command == "import":
        run_import(argv[1])
    else:
        raise SystemExit(f"workers.py: unknown command {command!r}")
    return 0


# ---------------------------------------------------------------- the parent's side

WORKERS = Path(__file__).resolve()


class Worker:
    """A worker process whose output lines are collected by a thread (reads never block)."""

    def __init__(self, url: str, *args: str) -> None:
        import os
        import queue
        import subprocess
        import threading

        env = {**os.environ, "PARTSDB_DB": url}
        self.proc = subprocess.Popen([sys.executable, str(WORKERS), *args], env=env, text=True,
                                     stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                                     stderr=subprocess.PIPE)
        self.lines: queue.Queue[str | None] = queue.Queue()
        self.seen: list[str] = []
        threading.Thread(target=self._pump, daemon=True).start()

    def _pump(self) -> None:
        assert self.proc.stdout is not None
        for line in self.proc.stdout:
            self.lines.put(line.rstrip("\n"))
        self.lines.put(None)

    def wait_for(self, predicate: Any, timeout: float = 60.0) -> str:
        """The first output line for which ``predicate`` holds (fails on exit or timeout)."""
        import queue
        import time

        deadline = time.monotonic() + timeout
        while True:
            try:
                line = self.lines.get(timeout=max(0.0, deadline - time.monotonic()))
            except queue.Empty:
                raise AssertionError(f"worker gave no matching line in {timeout} s; "
                                     f"saw {self.seen[-5:]}") from None
            if line is None:
                err = self.proc.stderr.read() if self.proc.stderr else ""
                raise AssertionError(f"worker ended early (saw {self.seen[-5:]}):\n{err}")
            self.seen.append(line)
            if predicate(line):
                return line

    def go(self) -> None:
        assert self.proc.stdin is not None
        self.proc.stdin.write("go\n")
        self.proc.stdin.flush()

    def kill(self) -> None:
        """SIGKILL: no handler, no cleanup, no flush; the process simply stops."""
        self.proc.kill()
        self.proc.wait(timeout=30)

    def finish(self, timeout: float = 120.0) -> str:
        """Wait for a normal exit; the last output line."""
        self.proc.wait(timeout=timeout)
        err = self.proc.stderr.read() if self.proc.stderr else ""
        assert self.proc.returncode == 0, f"worker failed ({self.proc.returncode}):\n{err}"
        last = ""
        while (line := self.lines.get(timeout=10)) is not None:
            self.seen.append(line)
            last = line
        return last


def wait_until_alone(url: str, timeout: float = 20.0) -> None:
    """On PostgreSQL, wait until no other session uses the database (a killed client's
    backend finishes its rollback first); nothing to wait for on SQLite."""
    import time

    from sqlalchemy import create_engine, text

    if not url.startswith("postgresql"):
        return
    engine = create_engine(url)
    deadline = time.monotonic() + timeout
    try:
        with engine.connect() as conn:
            while True:
                others = conn.execute(text(
                    "SELECT count(*) FROM pg_stat_activity WHERE datname = current_database() "
                    "AND pid <> pg_backend_pid()")).scalar_one()
                conn.rollback()
                if not others:
                    return
                if time.monotonic() > deadline:
                    raise AssertionError(f"{others} session(s) still open after {timeout} s")
                time.sleep(0.05)
    finally:
        engine.dispose()

if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
