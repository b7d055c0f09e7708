"""A whole shop at once: copy it between databases, back it up while benches work, restore it.

Copy moves every table (devices, locations, lots, movements, swaps) with its ids, so foreign
keys and ledger references hold, from a consistent snapshot of the source into the target in
one transaction; then it tallies both sides (rows per table, every lot's quantity, the ledger
sum) and commits only when they agree. A target that holds anything is refused unless
``force`` is given, and then emptied in the same transaction, so a failed copy leaves it as
it was. PostgreSQL sequences are moved past the copied ids so new rows get fresh ones.

Backups come in two forms:

* ``sqlite``: a SQLite file made with SQLite's online backup API (``sqlite3.Connection.backup``),
  a consistent copy taken while other benches may be writing (WAL readers do not block them);
* ``zip``: a portable archive of one CSV per table plus ``manifest.json`` (format, schema
  revision, row counts, SHA-256 of each file, stock and ledger totals), read in one
  REPEATABLE READ snapshot on PostgreSQL. It restores into either backend.

Restore reads either form and loads it like a copy, after checking the manifest.
"""

from __future__ import annotations

import contextlib
import csv
import hashlib
import io
import json
import os
import shutil
import sqlite3
import tempfile
import zipfile
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from sqlalchemy import Table, bindparam, func, select, text, update
from sqlalchemy.engine import URL, Connection
from sqlalchemy.exc import IntegrityError, OperationalError

from partsdb.errors import InvalidInput
from partsdb.storage.database import (
    Database,
    DatabaseError,
    current_revision,
    make_engine,
    open_database,
)
from partsdb.storage.models import Base

TABLE_ORDER: tuple[str, ...] = ("devices", "locations", "lots", "movements", "swaps")
"""Every table of a shop, parents before children (the order rows are inserted in)."""

BACKUP_FORMAT = "partsdb-backup"
BACKUP_FORMAT_VERSION = 1
NULL = "\\N"
"""How a zip backup writes NULL; a text value starting with a backslash gets one more."""
BATCH = 5000
SQLITE_MAGIC = b"SQLite format 3\x00"


class BackupError(InvalidInput):
    """A copy, backup or restore refused or failed; nothing was changed. The message says why."""


# ---------------------------------------------------------------- what a database holds

@dataclass
class Tally:
    """Row counts per table and stock totals: what a copy must preserve."""

    rows: dict[str, int]
    stock_total: int
    """Sum of every lot's quantity."""
    ledger_total: int
    """Sum of every ledger change (equals ``stock_total`` in a healthy database)."""
    lot_quantities: dict[int, int] = field(default_factory=dict, repr=False)
    """Lot id -> quantity; ids are kept by a copy, so these must match one for one."""

    def to_json(self) -> dict[str, Any]:
        return {"rows": dict(self.rows), "stock_total": self.stock_total,
                "ledger_total": self.ledger_total}


@dataclass
class CopyReport:
    """Source and target tallies of a finished copy or restore (they matched, or it failed)."""

    source: str
    target: str
    before: Tally
    after: Tally

    def lines(self) -> list[str]:
        width = max(len(t) for t in TABLE_ORDER)
        out = [f"{'table':<{width}}  {'source':>9}  {'target':>9}"]
        out += [f"{t:<{width}}  {self.before.rows[t]:>9}  {self.after.rows[t]:>9}"
                for t in TABLE_ORDER]
        out.append(f"{'stock':<{width}}  {self.before.stock_total:>9}  {self.after.stock_total:>9}")
        out.append(f"{'ledger':<{width}}  {self.before.ledger_total:>9}  "
                   f"{self.after.ledger_total:>9}")
        return out

    def to_json(self) -> dict[str, Any]:
        return {"source": self.source, "target": self.target, "source_tally": self.before.to_json(),
                "target_tally": self.after.to_json(), "verified": True}


@dataclass
class BackupReport:
    path: Path
    format: str
    revision: str
    tally: Tally

    def to_json(self) -> dict[str, Any]:
        return {"path": str(self.path), "format": self.format, "schema_revision": self.revision,
                **self.tally.to_json()}


def shop_tables() -> list[Table]:
    tables = Base.metadata.tables
    return [tables[name] for name in TABLE_ORDER]


def tally(conn: Connection) -> Tally:
    """What the database on ``conn`` holds (read in the connection's current transaction)."""
    lots = Base.metadata.tables["lots"]
    movements = Base.metadata.tables["movements"]
    rows = {t.name: int(conn.execute(select(func.count()).select_from(t)).scalar_one())
            for t in shop_tables()}
    quantities = {int(i): int(q) for i, q in conn.execute(select(lots.c.id, lots.c.quantity))}
    ledger = conn.execute(select(func.coalesce(func.sum(movements.c.change), 0))).scalar_one()
    return Tally(rows, sum(quantities.values()), int(ledger), quantities)


def _mismatch(before: Tally, after: Tally) -> list[str]:
    problems = [f"{t}: {before.rows[t]} rows in the source, {after.rows[t]} in the target"
                for t in TABLE_ORDER if before.rows[t] != after.rows[t]]
    if before.stock_total != after.stock_total:
        problems.append(f"stock total {before.stock_total} in the source, {after.stock_total} "
                        "in the target")
    if before.ledger_total != after.ledger_total:
        problems.append(f"ledger sum {before.ledger_total} in the source, {after.ledger_total} "
                        "in the target")
    differing = [i for i, q in before.lot_quantities.items() if after.lot_quantities.get(i) != q]
    if differing:
        problems.append(f"{len(differing)} lot(s) differ in quantity (first: lot id {differing[0]})")
    return problems


def is_empty(conn: Connection) -> bool:
    return all(conn.execute(select(t.c.id).limit(1)).first() is None for t in shop_tables())


# ---------------------------------------------------------------- snapshots and loading

@contextlib.contextmanager
def snapshot(db: Database) -> Iterator[Connection]:
    """A connection that sees one consistent state of the database while others write."""
    with db.engine.connect() as conn:
        if db.dialect == "sqlite":
            # The sqlite3 driver only opens a transaction before a write, so every SELECT
            # would see its own state; an explicit BEGIN makes them share one WAL snapshot.
            conn.exec_driver_sql("BEGIN")
        elif db.dialect == "postgresql":
            conn = conn.execution_options(isolation_level="REPEATABLE READ")
            conn.exec_driver_sql("SET TRANSACTION READ ONLY")
        try:
            yield conn
        finally:
            conn.rollback()


def _read_batches(conn: Connection) -> Iterator[tuple[Table, list[dict[str, Any]]]]:
    for table in shop_tables():
        result = conn.execute(select(table).order_by(table.c.id).execution_options(yield_per=BATCH))
        for part in result.mappings().partitions(BATCH):
            yield table, [dict(row) for row in part]


def _clear(conn: Connection) -> None:
    locations = Base.metadata.tables["locations"]
    # The location tree refers to itself with ON DELETE RESTRICT; cut the links first.
    conn.execute(update(locations).values(parent_id=None))
    for table in reversed(shop_tables()):
        conn.execute(table.delete())


def _fix_sequences(conn: Connection) -> None:
    """Move each PostgreSQL id sequence past the largest copied id."""
    if conn.dialect.name != "postgresql":
        return  # SQLite picks max(rowid) + 1 by itself
    for table in TABLE_ORDER:
        conn.execute(text(
            f"SELECT setval(pg_get_serial_sequence('{table}', 'id'), "
            f"COALESCE((SELECT MAX(id) FROM {table}), 1), "
            f"(SELECT MAX(id) FROM {table}) IS NOT NULL)"))


def _load(target: Database, batches: Iterable[tuple[Table, list[dict[str, Any]]]], force: bool,
          expect: Callable[[], Tally], describe_target: str, allow_empty: bool = False) -> Tally:
    """Write ``batches`` into ``target`` in one transaction and return its tally.

    ``expect`` gives the tally to match once every batch has been read; any mismatch rolls
    the whole load back, so the target is either the complete copy or unchanged.
    """
    try:
        return _load_once(target, batches, force, expect, describe_target, allow_empty)
    except IntegrityError as err:
        raise BackupError(f"the data breaks a rule of {describe_target}, so nothing was changed: "
                          f"{str(err.orig).splitlines()[0]}") from err
    except OperationalError as err:
        text_ = str(err.orig).splitlines()[0] if err.orig is not None else str(err)
        raise DatabaseError(f"database error on {describe_target}, nothing was changed: "
                            f"{text_}") from err


def _load_once(target: Database, batches: Iterable[tuple[Table, list[dict[str, Any]]]],
               force: bool, expect: Callable[[], Tally], describe_target: str,
               allow_empty: bool = False) -> Tally:
    locations = Base.metadata.tables["locations"]
    with target.engine.begin() as conn:
        held_data = not is_empty(conn)
        if held_data:
            if not force:
                raise BackupError(f"{describe_target} already holds data; nothing was changed "
                                  "(use --force to replace everything in it)")
            _clear(conn)
        parents: list[dict[str, int]] = []
        for table, rows in batches:
            if table is locations:
                # Insert the tree flat and link it afterwards: no parent-before-child order needed.
                parents += [{"_id": r["id"], "_parent": r["parent_id"]}
                            for r in rows if r["parent_id"] is not None]
                # An archive from before schema 0004 has no place key: derive it as 0004 does.
                rows = [{**r, "parent_id": None, "key": r.get("key") or str(r["path"]).lower()}
                        for r in rows]
            conn.execute(table.insert(), rows)
        if parents:
            conn.execute(update(locations).where(locations.c.id == bindparam("_id"))
                         .values(parent_id=bindparam("_parent")), parents)
        _fix_sequences(conn)
        after = tally(conn)
        problems = _mismatch(expect(), after)
        if problems:
            raise BackupError("the copy does not match its source, so nothing was changed: "
                              + "; ".join(problems))
        if held_data and not any(after.rows.values()) and not allow_empty:
            raise BackupError(f"the source is empty and would leave {describe_target} empty; "
                              "nothing was changed (use --force --allow-empty to empty it)")
    return after


def _same_database(a: Database, b: Database) -> bool:
    if a.dialect == "sqlite" and b.dialect == "sqlite":
        return bool(a.url.database) and a.url.database == b.url.database
    return (a.url.render_as_string(hide_password=True)
            == b.url.render_as_string(hide_password=True))


# ---------------------------------------------------------------- copy

def copy_database(source: Database, target: Database, force: bool = False,
                  allow_empty: bool = False) -> CopyReport:
    """Copy every table of ``source`` into ``target`` with ids kept, then verify the tallies."""
    if _same_database(source, target):
        raise BackupError(f"source and target are the same database ({source.describe()})")
    src_rev, dst_rev = current_revision(source.engine), current_revision(target.engine)
    if src_rev != dst_rev:
        raise BackupError(f"schema revisions differ (source {src_rev}, target {dst_rev}); "
                          "open both with this partsdb first so they are upgraded")
    with snapshot(source) as conn:
        before = tally(conn)
        after = _load(target, _read_batches(conn), force, lambda: before, target.describe(),
                      allow_empty)
    return CopyReport(source.describe(), target.describe(), before, after)


# ---------------------------------------------------------------- backup

def _encode(value: Any) -> str:
    if value is None:
        return NULL
    if isinstance(value, bool):
        return "1" if value else "0"
    if isinstance(value, float):
        return repr(value)  # the shortest text that reads back as the same float
    if isinstance(value, datetime):
        return value.isoformat()
    if isinstance(value, str):
        return "\\" + value if value.startswith("\\") else value
    return str(value)


def backup(db: Database, dest: str | os.PathLike[str], fmt: str = "auto",
           force: bool = False) -> BackupReport:
    """Write a consistent backup of ``db`` to ``dest`` (``fmt``: auto, sqlite or zip).

    Written through :func:`partsdb.services.files.atomic_path`: the file appears at ``dest``
    only when complete; the database's own files are refused; hidden partial files left by a
    killed earlier backup to the same ``dest`` are removed first.
    """
    from partsdb.services.files import atomic_path, protected_files

    path = Path(dest)
    if fmt == "auto":  # a name ending in .zip asks for the zip; otherwise the database's own kind
        fmt = "zip" if path.suffix.lower() == ".zip" or db.dialect != "sqlite" else "sqlite"
    if fmt not in ("sqlite", "zip"):
        raise BackupError(f"backup format: {fmt!r} is not valid; expected auto, sqlite or zip")
    if fmt == "sqlite" and path.suffix.lower() == ".zip":
        raise BackupError(f"backup: {str(dest)!r} ends in .zip but --format sqlite writes a "
                          "SQLite file; expected another name or --format zip")
    if fmt == "sqlite" and db.dialect != "sqlite":
        raise BackupError(f"backup format sqlite needs a SQLite database, not {db.dialect}; "
                          "use the zip format")
    with atomic_path(path, force=force, protect=protected_files(db), what="backup") as tmp:
        if fmt == "sqlite":
            revision, counted = _backup_sqlite(db, tmp)
        else:
            revision, counted = _backup_zip(db, tmp)
    return BackupReport(path, fmt, revision, counted)


def _backup_sqlite(db: Database, tmp: Path) -> tuple[str, Tally]:
    raw = db.engine.raw_connection()
    try:
        source = raw.driver_connection
        assert isinstance(source, sqlite3.Connection)
        target = sqlite3.connect(tmp)
        try:
            # pages=-1: the whole database in one step, under one read snapshot (SQLite docs,
            # "Online Backup API"), so the copy is consistent even while others write.
            source.backup(target, pages=-1)
            check = target.execute("PRAGMA integrity_check").fetchone()
            if not check or check[0] != "ok":
                raise BackupError(f"backup: the copy failed SQLite's integrity check ({check})")
        finally:
            target.close()
    finally:
        raw.close()
    engine = make_engine(URL.create("sqlite", database=str(tmp)))
    try:
        with engine.connect() as conn:
            counted = tally(conn)
        revision = current_revision(engine) or ""
        # The copy is left in rollback-journal mode, a single self-contained file.
        with engine.connect() as conn:
            conn.exec_driver_sql("PRAGMA journal_mode=DELETE")
    finally:
        engine.dispose()
    return revision, counted


class _Hashing(io.RawIOBase):
    """A write-only stream that hashes what passes through it on the way to ``target``."""

    def __init__(self, target: Any, digest: Any) -> None:
        self._target = target
        self._digest = digest

    def writable(self) -> bool:
        return True

    def write(self, data: Any) -> int:
        self._digest.update(data)
        self._target.write(data)
        return len(data)

    def close(self) -> None:  # the zip member is closed by its own context manager
        super().close()


def _backup_zip(db: Database, tmp: Path) -> tuple[str, Tally]:
    with snapshot(db) as conn:
        from alembic.runtime.migration import MigrationContext

        revision = MigrationContext.configure(conn).get_current_revision() or ""
        counted = tally(conn)
        manifest: dict[str, Any] = {
            "format": BACKUP_FORMAT, "format_version": BACKUP_FORMAT_VERSION,
            "schema_revision": revision, "made_at": datetime.now(UTC).isoformat(timespec="seconds"),
            "source": db.describe(), "dialect": db.dialect, "tables": {},
            **counted.to_json()}
        with zipfile.ZipFile(tmp, "w", compression=zipfile.ZIP_DEFLATED) as archive:
            for table in shop_tables():
                columns = [c.name for c in table.columns]
                name = f"{table.name}.csv"
                digest = hashlib.sha256()
                rows = 0
                # Streamed into the archive, so a 200,000-row catalog is never held as text.
                with archive.open(name, "w", force_zip64=True) as member, \
                        io.TextIOWrapper(_Hashing(member, digest), encoding="utf-8",
                                         newline="") as handle:
                    writer = csv.writer(handle, lineterminator="\n")
                    writer.writerow(columns)
                    result = conn.execute(
                        select(table).order_by(table.c.id).execution_options(yield_per=BATCH))
                    for part in result.partitions(BATCH):
                        writer.writerows([_encode(v) for v in row] for row in part)
                        rows += len(part)
                manifest["tables"][table.name] = {
                    "file": name, "rows": rows, "columns": columns, "sha256": digest.hexdigest()}
            archive.writestr("manifest.json", json.dumps(manifest, indent=2))
    return revision, counted


# ---------------------------------------------------------------- restore

def backup_kind(src: str | os.PathLike[str]) -> str:
    """"zip" or "sqlite" by the file's content, or a BackupError naming what was expected."""
    path = Path(src)
    if not path.is_file():
        raise BackupError(f"restore: {str(path)!r} is not a file")
    with path.open("rb") as handle:
        head = handle.read(len(SQLITE_MAGIC))
    if head == SQLITE_MAGIC:
        return "sqlite"
    if zipfile.is_zipfile(path):
        return "zip"
    raise BackupError(f"restore: {str(path)!r} is neither a partsdb zip backup nor a SQLite file")


def restore(db: Database, src: str | os.PathLike[str], force: bool = False,
            allow_empty: bool = False) -> CopyReport:
    """Replace the content of ``db`` by the backup at ``src`` (refused if ``db`` holds data
    and ``force`` is not given, or if the backup would empty it and ``allow_empty`` is not
    given); verified against the backup's own tally. Working copies left by a killed
    earlier restore are removed first."""
    remove_stale_restore_copies()
    kind = backup_kind(src)
    if kind == "sqlite":
        return _restore_sqlite(db, Path(src), force, allow_empty)
    return _restore_zip(db, Path(src), force, allow_empty)


RESTORE_WORK_PREFIX = "partsdb-restore-"


def remove_stale_restore_copies(folder: str | os.PathLike[str] | None = None) -> list[Path]:
    """Remove working copies left in the temporary folder by a restore that was killed
    (named ``partsdb-restore-PID-XXXX``; its process is gone)."""
    from partsdb.services.files import _pid_alive

    base = Path(folder or tempfile.gettempdir())
    removed: list[Path] = []
    with contextlib.suppress(OSError):
        for entry in base.iterdir():
            if not entry.name.startswith(RESTORE_WORK_PREFIX) or not entry.is_dir():
                continue
            pid = entry.name[len(RESTORE_WORK_PREFIX):].split("-", 1)[0]
            if pid.isdigit() and _pid_alive(int(pid)):
                continue
            shutil.rmtree(entry, ignore_errors=True)
            removed.append(entry)
    return removed


def _restore_sqlite(db: Database, src: Path, force: bool, allow_empty: bool) -> CopyReport:
    from partsdb.storage.database import SCHEMA_HEAD, known_revisions

    revision = _require_partsdb_file(src)
    if revision == SCHEMA_HEAD:
        # Read in place, read-only: the backup stays byte for byte as made.
        source = open_database(src, read_only=True, notify=None)
        try:
            report = copy_database(source, db, force=force, allow_empty=allow_empty)
        finally:
            source.dispose()
        report.source = str(src)
        return report
    if revision not in known_revisions():
        raise BackupError(f"restore: {str(src)!r} has schema revision {revision!r}, which this "
                          f"partsdb does not know (newest here: {SCHEMA_HEAD}); restore it with "
                          "a newer partsdb")
    # An older schema is upgraded on a working copy, so the backup itself stays as made. The
    # copy's folder carries this process's id: the next restore removes it if this one is killed.
    folder = tempfile.mkdtemp(prefix=f"{RESTORE_WORK_PREFIX}{os.getpid()}-")
    try:
        work = Path(folder) / "backup.sqlite"
        shutil.copyfile(src, work)
        try:
            source = open_database(work, notify=None)
        except DatabaseError as err:
            raise BackupError(f"restore: {str(src)!r} is not a usable partsdb database "
                              f"({err})") from err
        try:
            report = copy_database(source, db, force=force, allow_empty=allow_empty)
        finally:
            source.dispose()
    finally:
        shutil.rmtree(folder, ignore_errors=True)
    report.source = str(src)
    return report


def _require_partsdb_file(src: Path) -> str:
    """The schema revision of the SQLite file ``src`` (read-only), or a BackupError."""
    from urllib.parse import quote

    try:
        with contextlib.closing(sqlite3.connect(f"file:{quote(str(src))}?mode=ro",
                                                uri=True)) as conn:
            row = conn.execute("SELECT version_num FROM alembic_version").fetchone()
            check = conn.execute("PRAGMA quick_check").fetchone()
    except sqlite3.DatabaseError as err:
        raise BackupError(f"restore: {str(src)!r} is a SQLite file but not a partsdb database "
                          f"({err})") from err
    if not row or not isinstance(row[0], str):
        raise BackupError(f"restore: {str(src)!r} is a SQLite file without a partsdb schema "
                          "revision")
    if not check or check[0] != "ok":
        detail = " ".join(str(check[0] if check else None).split())
        raise BackupError(f"restore: {str(src)!r} is damaged (SQLite quick_check: "
                          f"{detail[:120]})")
    return row[0]


def _restore_zip(db: Database, src: Path, force: bool, allow_empty: bool) -> CopyReport:
    from partsdb.services import archive as checks
    from partsdb.storage.database import known_revisions

    where = repr(str(src))
    tables = {t.name: t for t in shop_tables()}
    try:
        archive = zipfile.ZipFile(src)
    except (zipfile.BadZipFile, OSError, ValueError, EOFError) as err:
        raise BackupError(f"restore: {where} is not a readable zip ({err})") from err
    with archive:
        members = checks.check_members(archive, where)
        manifest = checks.read_manifest(archive, members, where, tables, BACKUP_FORMAT,
                                        BACKUP_FORMAT_VERSION, known_revisions)
        entries: dict[str, dict[str, Any]] = manifest["tables"]
        for entry in entries.values():
            checks.verify_checksum(archive, members[entry["file"]], entry["sha256"], where)

        def batches() -> Iterator[tuple[Table, list[dict[str, Any]]]]:
            for table in shop_tables():
                entry = entries.get(table.name)
                if entry is None:  # a table added by a later revision than the backup's
                    continue
                for part in checks.rows(archive, table, entry, where, BATCH):
                    yield table, part

        def expected() -> Tally:
            rows = {t: int(entries[t]["rows"]) if t in entries else 0 for t in TABLE_ORDER}
            return Tally(rows, int(manifest["stock_total"]), int(manifest["ledger_total"]))

        after = _load(db, batches(), force, expected, db.describe(), allow_empty)
    before = expected()
    before.lot_quantities = dict(after.lot_quantities)
    return CopyReport(str(src), db.describe(), before, after)


__all__ = ["BackupError", "BackupReport", "CopyReport", "Tally", "backup", "backup_kind",
           "copy_database", "is_empty", "restore", "snapshot", "tally"]
