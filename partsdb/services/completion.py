"""Shell completion from the database: stored designations and place paths starting with what
the user has typed so far.

Called by the shell's completion script on every TAB, so it is quick (one query, no
pandas) and it never fails: no database yet, a server that does not answer, a schema from
another version — each simply completes nothing. It never creates a database file either.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from typing import Any

LIMIT = 200
"""At most this many candidates (a shell shows a long list poorly anyway)."""


def _values(target: str | None, query: Callable[[Any], Any]) -> list[str]:
    try:
        from sqlalchemy import inspect

        from partsdb.storage.database import make_engine, resolve_url

        url = resolve_url(target)
        if url.get_backend_name() == "sqlite" and not (url.database and
                                                       os.path.isfile(url.database)):
            return []
        engine = make_engine(url)
        try:
            with engine.connect() as conn:
                if not inspect(conn).has_table("devices"):
                    return []
                return [str(v) for v in conn.execute(query(conn)).scalars()]
        finally:
            engine.dispose()
    except Exception:  # completion must never print a traceback into the user's shell
        return []


def _prefix(text: str) -> str:
    return text.replace("\\", "\\\\").replace("%", "\\%").replace("_", "\\_") + "%"


def complete_designations(target: str | None, incomplete: str) -> list[str]:
    """Stored designations starting with ``incomplete`` (any case), sorted."""
    from sqlalchemy import select

    from partsdb.storage.models import DeviceRow

    return _values(target, lambda _conn: select(DeviceRow.designation)
                   .where(DeviceRow.designation.ilike(_prefix(incomplete), escape="\\"))
                   .order_by(DeviceRow.designation).limit(LIMIT))


def complete_places(target: str | None, incomplete: str) -> list[str]:
    """Stored place paths (cabinet, drawer, box) starting with ``incomplete``, sorted."""
    from sqlalchemy import select

    from partsdb.storage.models import LocationRow

    return _values(target, lambda _conn: select(LocationRow.path)
                   .where(LocationRow.path.ilike(_prefix(incomplete), escape="\\"))
                   .order_by(LocationRow.path).limit(LIMIT))
