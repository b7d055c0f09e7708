"""Migrations: models agree with them, and an old database upgrades with its data intact."""

from __future__ import annotations

from sqlalchemy import select

from partsdb.services import catalog, stock
from partsdb.storage.database import (
    current_revision,
    head_revision,
    make_engine,
    open_database,
    resolve_url,
    upgrade,
)
from partsdb.storage.models import Base


def test_models_match_migrations(db_url: str) -> None:
    from alembic.autogenerate import compare_metadata
    from alembic.migration import MigrationContext

    db = open_database(db_url, notify=None)
    with db.engine.connect() as conn:
        diffs = compare_metadata(MigrationContext.configure(conn), Base.metadata)
    db.dispose()
    assert diffs == []


def test_first_revision_upgrades_with_data(db_url: str) -> None:
    engine = make_engine(resolve_url(db_url))
    upgrade(engine, "0001")
    assert current_revision(engine) == "0001"
    engine.dispose()
    # Fill the old schema through the services that existed then (devices and stock).
    from partsdb.storage.database import Database

    old = Database(make_engine(resolve_url(db_url)))
    with old.session() as session:
        catalog.add_device(session, {"designation": "ZQ9", "kind": "bjt", "polarity": "pnp",
                                     "material": "ge", "vceo": "20V"})
        stock.receive(session, "ZQ9", 7, "C1/D03")
    old.dispose()

    notices: list[str] = []
    db = open_database(db_url, notify=notices.append)
    assert current_revision(db.engine) == head_revision()
    assert notices and "0001" in notices[0]
    with db.session() as session:
        assert catalog.get_device(session, "zq 9").vceo == 20.0
        assert [v.quantity for v in stock.where(session, "ZQ9")] == [7]
        from partsdb.storage.models import SwapRow

        assert session.scalars(select(SwapRow)).all() == []  # the new table exists
    db.dispose()


def test_default_database_lives_in_user_data_dir(tmp_path, monkeypatch) -> None:  # type: ignore[no-untyped-def]
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path / "xdg"))
    url = resolve_url(None)
    assert url.database.startswith(str(tmp_path / "xdg"))
    monkeypatch.setenv("PARTSDB_DB", str(tmp_path / "env.sqlite"))
    assert resolve_url(None).database == str(tmp_path / "env.sqlite")


def test_sqlite_pragmas(tmp_path) -> None:  # type: ignore[no-untyped-def]
    db = open_database(tmp_path / "p.sqlite", notify=None)
    with db.engine.connect() as conn:
        assert conn.exec_driver_sql("PRAGMA foreign_keys").scalar() == 1
        assert conn.exec_driver_sql("PRAGMA journal_mode").scalar() == "wal"
        assert conn.exec_driver_sql("PRAGMA busy_timeout").scalar() > 0
    db.dispose()


def test_schema_head_constant_matches_alembic() -> None:
    # open_database compares against SCHEMA_HEAD without importing Alembic; it must not drift.
    from partsdb.storage.database import SCHEMA_HEAD

    assert head_revision() == SCHEMA_HEAD
