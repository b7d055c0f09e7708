"""The device catalog: look up, add, edit, remove and list device records.

Every face (CLI, TUI, importer) goes through these functions, so the rules hold everywhere:
designations are compared by their normalised key, a second record with the same key is
refused with a pointer to the first, and consistency warnings are stored with the record.
The CSV importer parses and checks whole columns itself and stores them through
:func:`add_many` (a fast insert of many checked rows).
"""

from __future__ import annotations

import contextlib
import math
from collections.abc import Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from partsdb.designations import normalize
from partsdb.device import FIELD_NAMES, Device, parse_device
from partsdb.errors import InvalidInput, NotFoundError
from partsdb.storage.models import DeviceRow, LotRow, MovementRow

STORED_FIELDS: tuple[str, ...] = FIELD_NAMES


class CatalogError(InvalidInput):
    """A catalog operation refused; the message says why and what to do."""


class NotFound(NotFoundError):
    """A device or place that is not stored."""


def consistency_warnings(device: Device) -> list[str]:
    """What the designation implies that the record contradicts (empty when none)."""
    from partsdb.consistency import consistency_warnings as check

    return check(device)


def row_to_device(row: DeviceRow) -> Device:
    values = {name: getattr(row, name) for name in STORED_FIELDS}
    values["obsolete"] = bool(values["obsolete"])
    if values["body_diode"] is not None:
        values["body_diode"] = bool(values["body_diode"])
    device = Device(**values)
    device.warnings = [w for w in (row.warnings or "").split("\n") if w]
    return device


def device_values(device: Device) -> dict[str, Any]:
    """Column values for a :class:`DeviceRow` (the record plus its key and warnings)."""
    values = device.to_dict()
    values["key"] = device.key
    values["warnings"] = "\n".join(device.warnings) or None
    return values


def _row(session: Session, designation: str) -> DeviceRow | None:
    return session.scalars(select(DeviceRow).where(DeviceRow.key == normalize(designation))).first()


def get_device(session: Session, designation: str) -> Device | None:
    row = _row(session, designation)
    return None if row is None else row_to_device(row)


def require_row(session: Session, designation: str) -> DeviceRow:
    row = _row(session, designation)
    if row is None:
        raise NotFound(f"device {designation!r} not found{did_you_mean(session, designation)}")
    return row


def suggest(session: Session, text: str, limit: int = 3) -> list[str]:
    """Close spellings of ``text`` among stored designations (for "not found" messages)."""
    from partsdb.search import SearchIndex

    designations, _notes = designations_and_notes(session)
    if not designations:
        return []
    hits = SearchIndex(designations).find(text, limit=limit)
    return [h.designation for h in hits if h.score >= 60]


def did_you_mean(session: Session, text: str, limit: int = 3) -> str:
    """`` (did you mean: A, B?)`` naming close stored spellings of ``text``, or "" (the one
    place that writes this hint for a name not found)."""
    hints = suggest(session, text, limit)
    return f" (did you mean: {', '.join(hints)}?)" if hints else ""


def add_device(session: Session, raw: Mapping[str, Any] | Device) -> Device:
    """Validate and store a new device; refuses a designation already present."""
    device = raw if isinstance(raw, Device) else parse_device(raw)
    existing = _row(session, device.designation)
    if existing is not None:
        raise CatalogError(
            f"designation: {device.designation!r} is already stored as {existing.designation!r} "
            f"(same normalised key {device.key}); use 'partsdb device edit {existing.designation}'")
    device.warnings = consistency_warnings(device)
    session.add(DeviceRow(**device_values(device)))
    session.flush()
    return device


def edit_device(session: Session, designation: str, changes: Mapping[str, Any]) -> Device:
    """Apply raw ``changes`` (text with units allowed) and re-validate the whole record."""
    from partsdb.device import replace

    row = require_row(session, designation)
    current = row_to_device(row)
    updated = replace(current, **dict(changes))
    if updated.key != row.key and _row(session, updated.designation) is not None:
        raise CatalogError(f"designation: {updated.designation!r} is already stored; "
                           "choose another or edit that record")
    updated.warnings = consistency_warnings(updated)
    for name, value in device_values(updated).items():
        setattr(row, name, value)
    session.flush()
    return updated


def remove_device(session: Session, designation: str, force: bool = False) -> Device:
    """Delete a device; refuses while any lot or ledger entry refers to it unless ``force``."""
    row = require_row(session, designation)
    device = row_to_device(row)
    lots = session.scalars(select(LotRow).where(LotRow.device_id == row.id)).all()
    in_stock = sum(lot.quantity for lot in lots)
    if lots and not force:
        raise CatalogError(
            f"{row.designation} has {len(lots)} lot(s) holding {in_stock} part(s) and their "
            "ledger; take or count them to zero, or pass --force to delete lots and ledger too")
    for lot in lots:
        session.execute(MovementRow.__table__.delete().where(MovementRow.lot_id == lot.id))
        session.delete(lot)
    session.delete(row)
    session.flush()
    return device


@dataclass(frozen=True)
class DeviceFilter:
    """Optional filters for :func:`list_devices` (None = any)."""

    polarity: str | None = None
    material: str | None = None
    kind: str | None = None
    package: str | None = None
    obsolete: bool | None = None
    suspect: bool | None = None
    """True: only records with consistency warnings."""


def list_devices(session: Session, filters: DeviceFilter | None = None,
                 limit: int | None = None, offset: int = 0) -> list[Device]:
    query = _filtered(select(DeviceRow), filters).order_by(DeviceRow.key)
    if limit is not None:
        query = query.limit(limit).offset(offset)
    return [row_to_device(r) for r in session.scalars(query)]


def count_devices(session: Session, filters: DeviceFilter | None = None) -> int:
    query = _filtered(select(func.count(DeviceRow.id)), filters)
    return int(session.scalar(query) or 0)


def _filtered(query: Any, f: DeviceFilter | None) -> Any:
    if f is None:
        return query
    if f.polarity:
        query = query.where(DeviceRow.polarity == f.polarity)
    if f.material:
        query = query.where(DeviceRow.material == f.material)
    if f.kind:
        query = query.where(DeviceRow.kind == f.kind)
    if f.package:
        query = query.where(func.upper(DeviceRow.package) == f.package.upper())
    if f.obsolete is not None:
        query = query.where(DeviceRow.obsolete.is_(f.obsolete))
    if f.suspect is True:
        query = query.where(DeviceRow.warnings.is_not(None))
    elif f.suspect is False:
        query = query.where(DeviceRow.warnings.is_(None))
    return query


def designations_and_notes(session: Session) -> tuple[list[str], list[str | None]]:
    """Every designation and its notes, in the same (table) order, for the search index.

    A raw cursor and no ORDER BY: on 200,000 devices the ORM read in key order took about
    1.0 s (SQLite walks the key index and fetches each row), the plain table scan about 0.2 s.
    Search positions only have to match these lists, so their order does not matter.
    """
    cursor = session.connection().connection.cursor()
    try:
        cursor.execute("SELECT designation, notes FROM devices")
        rows = cursor.fetchall()
    finally:
        cursor.close()
    if not rows:
        return [], []
    designations, notes = zip(*rows, strict=True)
    return list(designations), list(notes)


def get_devices(session: Session, designations: Iterable[str]) -> dict[str, Device | None]:
    """The stored records of a few designations (search hits) in one query; None if absent."""
    wanted = {d: normalize(d) for d in designations}
    if not wanted:
        return {}
    rows = session.scalars(select(DeviceRow).where(DeviceRow.key.in_(set(wanted.values()))))
    by_key = {row.key: row_to_device(row) for row in rows}
    return {d: by_key.get(key) for d, key in wanted.items()}


def keys_in(session: Session, designations: Iterable[str]) -> dict[str, int]:
    """Map of normalised key -> device id for the given designations that exist."""
    keys = list({normalize(d) for d in designations})
    found: dict[str, int] = {}
    for start in range(0, len(keys), 500):
        chunk: Sequence[str] = keys[start:start + 500]
        for key, ident in session.execute(
                select(DeviceRow.key, DeviceRow.id).where(DeviceRow.key.in_(chunk))):
            found[key] = ident
    return found


BULK_COLUMNS: tuple[str, ...] = ("key", *FIELD_NAMES, "warnings")
"""The order of the values in each row given to :func:`add_many`."""


@dataclass
class Stored:
    """What :func:`add_many` did."""

    added: int = 0
    updated: int = 0
    unchanged: int = 0


def add_many(session: Session, batches: Iterable[Iterable[tuple[Any, ...]]],
             keys_checked: bool = False) -> Stored:
    """Store many records at once: new keys inserted, stored ones updated in place when changed.

    Each row holds the values of :data:`BULK_COLUMNS`, already parsed and checked (the importer
    checks whole columns with ``device.check_columns`` and the consistency warnings), with the
    row's normalised key first. A key given twice is refused before anything is written of that
    batch; the caller's transaction undoes earlier batches. Rows go in batches so that a caller
    never has to build every row of a 200,000-row import at once.

    The rows are written with the driver's own ``executemany`` on plain tuples: SQLAlchemy's
    per-row parameter processing cost more than the insert itself.

    ``keys_checked``: the caller has already refused repeated keys across all its batches (the
    importer does, compactly), so no set of every key is kept here.
    """
    from sqlalchemy import bindparam, update

    from partsdb.storage.models import utcnow

    table = DeviceRow.__table__
    now = utcnow()
    done = Stored()
    seen: set[str] | None = None if keys_checked else set()
    filled = bool(session.scalar(select(func.count()).select_from(table)))
    connection = session.connection()
    marker = "?" if connection.dialect.paramstyle == "qmark" else "%s"
    # sqlite3 would adapt the datetime once per row, to exactly this text (its default adapter
    # is datetime.isoformat(" ")); other drivers take the datetime itself.
    stamp: Any = now.isoformat(" ") if connection.dialect.name == "sqlite" else now
    columns = (*BULK_COLUMNS, "updated_at")
    sql = (f"INSERT INTO {table.name} ({', '.join(columns)}) "
           f"VALUES ({', '.join([marker] * len(columns))})")
    updates: list[dict[str, Any]] = []
    with _import_page_cache(connection):
        for batch in batches:
            _add_batch(session, connection, sql, stamp, now, list(batch), seen, filled, updates,
                       done)
    if updates:
        stmt = (update(table).where(table.c.id == bindparam("_id"))
                .values({k: bindparam(k) for k in updates[0] if k != "_id"}))
        connection.execute(stmt, updates)
    session.flush()
    return done


IMPORT_PAGE_CACHE_KIB = 65_536
"""SQLite's page cache during a bulk insert (its default is 2 MiB). At a million devices the
indexes on ``devices`` (key, polarity and kind, updated_at) outgrow 2 MiB, and each insert into
them then reads pages back from the file; 64 MiB holds them (SQLite docs, "PRAGMA cache_size")."""


@contextlib.contextmanager
def _import_page_cache(connection: Any) -> Iterator[None]:
    if connection.dialect.name != "sqlite":
        yield
        return
    before = connection.exec_driver_sql("PRAGMA cache_size").scalar()
    connection.exec_driver_sql(f"PRAGMA cache_size=-{IMPORT_PAGE_CACHE_KIB}")
    try:
        yield
    finally:
        connection.exec_driver_sql(f"PRAGMA cache_size={int(before)}")


def _add_batch(session: Session, connection: Any, sql: str, stamp: Any, now: Any,
               rows: list[tuple[Any, ...]], seen: set[str] | None, filled: bool,
               updates: list[dict[str, Any]], done: Stored) -> None:
    """One batch of :func:`add_many`: checked for repeated keys, then inserted or queued."""
    keys = [row[0] for row in rows]
    if seen is not None:
        for key in keys:
            if key in seen:
                raise CatalogError(f"designation: the key {key!r} is given twice; expected "
                                   "each designation once")
            seen.add(key)
    existing = _stored_rows(session, keys) if filled else {}
    inserts = []
    for row in rows:
        if row[0] not in existing:
            inserts.append((*row, stamp))
            continue
        ident, old = existing[row[0]]
        values = dict(zip(BULK_COLUMNS, row, strict=True))
        if all(_same(old.get(k), v) for k, v in values.items() if k != "key"):
            done.unchanged += 1
            continue
        updates.append({"_id": ident, **values, "updated_at": now})
        done.updated += 1
    if inserts:
        connection.exec_driver_sql(sql, inserts)
        done.added += len(inserts)


def _stored_rows(session: Session, keys: list[str]) -> dict[str, tuple[int, dict[str, Any]]]:
    """id and stored values by key, for those of ``keys`` that are stored."""
    table = DeviceRow.__table__
    cols = [table.c.id, *[table.c[name] for name in BULK_COLUMNS]]
    found: dict[str, tuple[int, dict[str, Any]]] = {}
    for start in range(0, len(keys), 900):
        chunk = keys[start:start + 900]
        for row in session.execute(select(*cols).where(table.c.key.in_(chunk))).mappings():
            found[row["key"]] = (row["id"], dict(row))
    return found


def _same(a: Any, b: Any) -> bool:
    if a is None or b is None:  # an unknown yes/no (body_diode) is not "no"
        return a is None and b is None
    if isinstance(a, float) and isinstance(b, float):
        return math.isclose(a, b, rel_tol=1e-12)
    if isinstance(a, bool) or isinstance(b, bool):
        return bool(a) == bool(b)
    return a == b
