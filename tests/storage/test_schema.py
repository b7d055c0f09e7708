"""Where the database lives, how SQLite connections are set up, and the schema head constant.

Upgrades of old databases and models-vs-migrations are in test_migrations_upgrade.py.
"""

from __future__ import annotations

from partsdb.storage.database import (
    head_revision,
    open_database,
    resolve_url,
)


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


def test_lot_conditions_and_reasons_match_the_schema_checks() -> None:
    """partsdb.lots is the one list; the database's CHECK constraints must allow exactly it."""
    import re

    from partsdb.lots import CONDITIONS, REASONS
    from partsdb.storage.models import LotRow, MovementRow

    def allowed(table: object, name: str) -> set[str]:
        check = next(c for c in table.constraints  # type: ignore[attr-defined]
                     if getattr(c, "name", None) == name)
        return set(re.findall(r"'([a-z]+)'", str(check.sqltext)))

    assert allowed(LotRow.__table__, "ck_lots_condition") == set(CONDITIONS)
    assert allowed(MovementRow.__table__, "ck_movements_reason") == set(REASONS)
