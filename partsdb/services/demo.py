"""The demo workshop: a fresh database built from ``seed_data/`` through the normal importer.

The scenario, its invented parts and its drawers are described in ``seed_data/README.md``.
"""

from __future__ import annotations

import os
from pathlib import Path

from partsdb.errors import EnvironmentProblem, InvalidInput
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


DEMO_APPLICATION_ID = 0x50444244
"""Written in the SQLite header of a demo database (``PRAGMA application_id``, SQLite docs,
"Database File Format" offset 68): how ``demo`` knows a file it may replace."""


class DemoRefused(InvalidInput):
    """The demo would replace a file it must not (exit 2); nothing was written."""


def is_demo_database(path: Path) -> bool:
    """Whether ``path`` is a SQLite file marked as a partsdb demo (read from its header)."""
    try:
        with path.open("rb") as handle:
            header = handle.read(72)
    except OSError:
        return False
    return (len(header) == 72 and header.startswith(b"SQLite format 3\x00")
            and int.from_bytes(header[68:72], "big") == DEMO_APPLICATION_ID)


def check_demo_target(target: str | os.PathLike[str], *, force: bool = False,
                      read_only: bool = False,
                      protect: tuple[str | os.PathLike[str] | None, ...] = ()) -> Path:
    """Refuse a demo target that would lose data: under --read-only; the default database or
    a database named in ``protect`` (always); an existing file that is not a demo database
    (unless ``force``). Returns the resolved path."""
    from partsdb.services.files import sqlite_files
    from partsdb.storage.database import default_path

    path = Path(target).expanduser().resolve()
    if read_only:
        raise DemoRefused("demo: refused under --read-only (building a demo writes a database); "
                          "nothing was written")
    guarded = set(sqlite_files(default_path()))
    for other in protect:
        guarded.update(sqlite_files(other))
    if path in guarded:
        raise DemoRefused(f"demo --path: {str(target)!r} is your working database; the demo "
                          "never replaces it (choose another path)")
    if path.is_dir():
        raise DemoRefused(f"demo --path: {str(target)!r} is a folder; expected a file name")
    if path.exists() and not is_demo_database(path) and not force:
        raise DemoRefused(f"demo --path: {str(target)!r} exists and is not a partsdb demo "
                          "database; nothing was written (use --force to replace it)")
    return path


def demo_target(given: str | os.PathLike[str] | None) -> Path:
    """Where to build the demo: ``given`` (a SQLite file path), else the default demo file.

    Refuses a server URL (the demo replaces a whole database, which is only done to a file)
    and the user's own default database.
    """
    from partsdb.storage.database import default_path

    if given is None:
        return default_demo_path()
    text = os.fspath(given)
    if "://" in text:
        raise InvalidInput(f"--db: {text.split('://')[0]}:// URL given; the demo is built in a "
                           "SQLite file, expected a file path")
    path = Path(text).expanduser()
    if path.resolve() == default_path().resolve():
        raise InvalidInput(f"--db: {text!r} is your own default database; the demo replaces "
                           "its file, expected another path")
    return path


def build_demo(target: str | os.PathLike[str]) -> Database:
    """Replace ``target`` with a new demo database; returns it open.

    The demo is built under a temporary name beside ``target`` and renamed into place only
    when complete, so a failed build leaves ``target`` as it was."""
    from partsdb.services.files import atomic_path

    path = Path(target).expanduser().resolve()
    seeds = seed_dir()
    if not path.parent.is_dir():
        path.parent.mkdir(parents=True, exist_ok=True)
    with atomic_path(path, force=True, what="demo") as tmp:
        tmp.unlink()
        db = open_database(tmp, notify=None)
        try:
            _fill(db, seeds)
            with db.engine.begin() as conn:
                conn.exec_driver_sql(f"PRAGMA application_id={DEMO_APPLICATION_ID}")
        finally:
            db.dispose()
        for suffix in ("-wal", "-shm", "-journal"):
            Path(str(path) + suffix).unlink(missing_ok=True)
    return open_database(path, notify=None)


def _fill(db: Database, seeds: Path) -> None:
    from partsdb.services import exchange, stock

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


def demo_summary(db: Database, command: str = "partsdb") -> str:
    """A few lines on what the demo holds, plus one worked substitution when available.

    ``command`` starts the command lines shown (``partsdb --db FILE`` names the demo's file).
    """
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

    lines += ["", worked_example(db, command)]
    from partsdb.cautions import SHORT_CAUTION

    lines += ["", SHORT_CAUTION]
    return "\n".join(lines)
