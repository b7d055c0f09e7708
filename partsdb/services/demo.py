"""The demo workshop: a fresh database built from ``seed_data/`` through the normal importer.

The scenario, its invented parts and its drawers are described in ``seed_data/README.md``.
"""

from __future__ import annotations

import os
from pathlib import Path

from partsdb.errors import EnvironmentProblem
from partsdb.storage.database import Database, open_database

SEED_PACKAGE = "partsdb_seed"
"""``seed_data/`` as installed (pyproject maps the folder to this data-only package)."""


class DemoError(EnvironmentProblem):
    """The demo cannot be built (seed files missing or unreadable); nothing was written."""


def seed_dir() -> Path:
    """The folder of the demo's seed files: $PARTSDB_SEED, else the installed seed package."""
    given = os.environ.get("PARTSDB_SEED")
    if given is not None:
        path = Path(given)
    else:
        from importlib.util import find_spec

        # A folder of data files only: a namespace package, located without importing it.
        spec = find_spec(SEED_PACKAGE)
        places = [Path(p) for p in (spec.submodule_search_locations or [])] if spec else []
        places.append(Path(__file__).resolve().parents[2] / "seed_data")  # a bare source tree
        path = next((p for p in places if (p / "devices.csv").is_file()), places[0])
    if not (path / "devices.csv").is_file():
        raise DemoError(f"demo seed files not found in {path}; reinstall partsdb (they come "
                        "with it) or set PARTSDB_SEED to a folder holding devices.csv")
    return path


def default_demo_path() -> Path:
    from platformdirs import user_data_dir

    return Path(user_data_dir("partsdb", appauthor=False)) / "partsdb-demo.sqlite"


def build_demo(target: str | os.PathLike[str]) -> Database:
    """Replace ``target`` with a new demo database; returns it open."""
    from partsdb.services import exchange, stock

    seeds = seed_dir()
    path = Path(target)
    for suffix in ("", "-wal", "-shm", "-journal"):
        Path(str(path) + suffix).unlink(missing_ok=True)
    db = open_database(path, notify=None)
    with db.session() as session:
        exchange.import_devices(session, seeds / "devices.csv")
        exchange.import_stock(session, seeds / "stock.csv")
    movements = seeds / "movements.csv"
    if movements.is_file():
        frame = exchange.read_csv(movements)
        with db.session() as session:
            for rec in frame.to_dict("records"):
                designation = rec["designation"]
                change = int(rec["change"])
                reason = rec["reason"].strip().lower()
                job = rec.get("job") or None
                note = rec.get("note") or None
                place = rec["location"]
                if reason == "take":
                    stock.take(session, designation, abs(change), place, job=job, note=note)
                elif reason == "return":
                    stock.return_parts(session, designation, abs(change), place, job=job,
                                       note=note)
                elif reason == "move":
                    source, _, dest = place.partition(">")
                    stock.move(session, designation, abs(change), source.strip(), dest.strip(),
                               job=job, note=note)
                elif reason == "count":
                    stock.count(session, designation, change, place, note=note)
                else:
                    raise DemoError(f"movements.csv: reason {reason!r} is not replayable")
    return db


def demo_summary(db: Database) -> str:
    """A few lines on what the demo holds, plus one worked substitution when available."""
    from sqlalchemy import func, select

    from partsdb.services import stock
    from partsdb.storage.models import DeviceRow, LocationRow, LotRow, MovementRow

    with db.session() as session:
        devices = session.scalar(select(func.count(DeviceRow.id))) or 0
        obsolete = session.scalar(select(func.count(DeviceRow.id)).where(DeviceRow.obsolete)) or 0
        places = session.scalar(select(func.count(LocationRow.id))) or 0
        lots = session.scalar(select(func.count(LotRow.id))) or 0
        parts = session.scalar(select(func.sum(LotRow.quantity))) or 0
        moves = session.scalar(select(func.count(MovementRow.id))) or 0
        low = stock.low_stock(session)
    lines = [
        f"{devices} device types ({obsolete} obsolete), {parts} parts in {lots} lots across "
        f"{places} places, {moves} ledger entries, {len(low)} below their low-stock mark.",
    ]
    from partsdb.services.substitution import worked_example

    lines += ["", worked_example(db)]
    from partsdb.cautions import SHORT_CAUTION

    lines += ["", SHORT_CAUTION]
    return "\n".join(lines)
