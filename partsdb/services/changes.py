"""Noticing changes made by other processes (another bench, the CLI) to an open database.

SQLite: ``PRAGMA data_version`` on one connection kept for the purpose. SQLite documents it as
changing whenever another connection commits a change to the database file, and staying put for
the connection's own changes (SQLite docs, "PRAGMA data_version"); one poll is a few
microseconds and reads no table.

PostgreSQL: a fingerprint of the tables people change: the newest ledger entry, the newest
device edit and the number of devices and places. A stock change always writes a ledger entry,
so a change of any quantity shows; a device added, edited or removed changes the device figures.
(A place renamed without any ledger entry would not show; places are not renamed yet.)
``LISTEN/NOTIFY`` would need triggers in a migration; the fingerprint needs none.
"""

from __future__ import annotations

import threading
from typing import TYPE_CHECKING, Any

from sqlalchemy import func, select

from partsdb.storage.models import DeviceRow, LocationRow, MovementRow

if TYPE_CHECKING:
    from sqlalchemy.engine import Connection

    from partsdb.storage.database import Database

_UNSET = object()

POLL_SECONDS = 1.0
"""How often the terminal UI asks: a change shows within this plus one refresh (< 2 s)."""


def catalog_fingerprint(db: Database) -> tuple[Any, ...]:
    """(devices, newest device edit): changes when a device is added, edited or removed."""
    with db.session() as session:
        return tuple(session.execute(
            select(func.count(DeviceRow.id), func.max(DeviceRow.updated_at))).one())


def _stock_fingerprint(conn: Connection) -> tuple[Any, ...]:
    return tuple(conn.execute(select(
        select(func.max(MovementRow.id)).scalar_subquery(),
        select(func.count(DeviceRow.id)).scalar_subquery(),
        select(func.max(DeviceRow.updated_at)).scalar_subquery(),
        select(func.count(LocationRow.id)).scalar_subquery())).one())


class ChangeWatch:
    """``changed()`` says whether the database changed since the last call (False at first)."""

    def __init__(self, db: Database) -> None:
        self.db = db
        self.sqlite = db.dialect == "sqlite"
        self._conn: Connection | None = None
        self._last: Any = _UNSET
        self._lock = threading.Lock()  # polled from a worker thread, absorbed from the UI's

    def _mark(self) -> Any:
        if self.sqlite:
            # data_version is per connection: the same one must be asked every time.
            if self._conn is None:
                self._conn = self.db.engine.connect()
            value = self._conn.exec_driver_sql("PRAGMA data_version").scalar()
            self._conn.rollback()  # hold no read transaction between polls
            return value
        with self.db.engine.connect() as conn:
            return _stock_fingerprint(conn)

    def changed(self) -> bool:
        with self._lock:
            mark = self._mark()
            previous, self._last = self._last, mark
        return previous is not _UNSET and mark != previous

    def close(self) -> None:
        with self._lock:
            self._close()

    def _close(self) -> None:
        if self._conn is not None:
            self._conn.close()
            self._conn = None
