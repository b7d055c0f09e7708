"""ChangeWatch: another connection's committed change is seen, once; idleness is not a change.

Runs on every backend (SQLite's data_version, PostgreSQL's ledger/catalog fingerprint). The
change is made through the services on a second, separately opened Database.
"""

from __future__ import annotations

from typing import Any

from partsdb.services import catalog, stock
from partsdb.services.changes import ChangeWatch, catalog_fingerprint
from partsdb.storage.database import open_database


def test_watch_sees_other_connections_changes_once(empty_db: Any) -> None:
    with empty_db.session() as session:
        catalog.add_device(session, {"designation": "QZ1", "kind": "bjt", "polarity": "npn",
                                     "material": "si"})
    watch = ChangeWatch(empty_db)
    other = open_database(empty_db.url.render_as_string(hide_password=False), notify=None)
    try:
        assert watch.changed() is False  # the first call takes the mark
        assert watch.changed() is False  # nothing happened
        with other.session() as session:
            stock.receive(session, "QZ1", 4, "C1/D1")
        assert watch.changed() is True
        assert watch.changed() is False  # reported once
        with other.session() as session:
            stock.take(session, "QZ1", 1, "C1/D1")
        assert watch.changed() is True
        mark = catalog_fingerprint(empty_db)
        with other.session() as session:
            catalog.add_device(session, {"designation": "QZ2", "kind": "bjt", "polarity": "pnp",
                                         "material": "ge"})
        assert watch.changed() is True
        assert catalog_fingerprint(empty_db) != mark
    finally:
        other.dispose()
        watch.close()
