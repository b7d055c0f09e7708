"""Shared fixtures: every test gets its own database and never sees the user's real data.

Fixtures named by what they hold: ``db_url`` / ``empty_db`` run once per backend (SQLite always;
PostgreSQL when ``PARTSDB_TEST_PG`` names a server, required when ``CI`` is set), ``demo_db``
is the demo workshop on SQLite.
"""

from __future__ import annotations

import os
import uuid
from collections import Counter
from collections.abc import Iterator
from pathlib import Path

import pytest

PG_ENV = "PARTSDB_TEST_PG"
_backend_counts: Counter[str] = Counter()


@pytest.fixture(autouse=True)
def _private_user_dirs(tmp_path_factory: pytest.TempPathFactory,
                       monkeypatch: pytest.MonkeyPatch) -> None:
    """Point the per-user data, config and cache directories at a temporary folder."""
    home = tmp_path_factory.mktemp("home")
    monkeypatch.setenv("XDG_DATA_HOME", str(home / "data"))
    monkeypatch.setenv("XDG_CONFIG_HOME", str(home / "config"))
    monkeypatch.setenv("XDG_CACHE_HOME", str(home / "cache"))
    monkeypatch.delenv("PARTSDB_CACHE_DIR", raising=False)
    monkeypatch.delenv("PARTSDB_DB", raising=False)
    monkeypatch.delenv("PARTSDB_CONFIG", raising=False)


def _pg_admin_url() -> str | None:
    url = os.environ.get(PG_ENV)
    if not url and os.environ.get("CI"):
        pytest.fail(f"CI must run the PostgreSQL tests: {PG_ENV} is not set")
    return url


@pytest.fixture
def pg_url() -> Iterator[str]:
    """A fresh, empty PostgreSQL database for one test (skipped without a server locally)."""
    admin = _pg_admin_url()
    if not admin:
        pytest.skip(f"PostgreSQL tests skipped: set {PG_ENV} to a server URL "
                    "(.ci/run starts one)")
    from sqlalchemy import create_engine, text
    from sqlalchemy.engine import make_url

    name = "t_" + uuid.uuid4().hex[:12]
    engine = create_engine(admin, isolation_level="AUTOCOMMIT")
    with engine.connect() as conn:
        conn.execute(text(f'CREATE DATABASE "{name}"'))
    url = make_url(admin).set(database=name).render_as_string(hide_password=False)
    try:
        yield url
    finally:
        with engine.connect() as conn:
            conn.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
        engine.dispose()


@pytest.fixture(params=["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)])
def db_url(request: pytest.FixtureRequest, tmp_path: Path) -> str:
    """A URL of an empty database, once per backend."""
    _backend_counts[request.param] += 1
    if request.param == "sqlite":
        return f"sqlite:///{tmp_path / 'test.sqlite'}"
    return str(request.getfixturevalue("pg_url"))


@pytest.fixture
def empty_db(db_url: str):  # type: ignore[no-untyped-def]
    from partsdb.storage.database import open_database

    db = open_database(db_url, notify=None)
    yield db
    db.dispose()


@pytest.fixture
def demo_db(tmp_path: Path):  # type: ignore[no-untyped-def]
    from partsdb.services.demo import build_demo

    db = build_demo(tmp_path / "demo.sqlite")
    yield db
    db.dispose()


def pytest_terminal_summary(terminalreporter, exitstatus, config) -> None:  # type: ignore[no-untyped-def]
    """Say how many database tests ran on each backend (CI's log shows both)."""
    passed = {rep.nodeid for rep in terminalreporter.stats.get("passed", [])}
    per_backend = Counter()
    for nodeid in passed:
        if "[sqlite" in nodeid or "-sqlite" in nodeid:
            per_backend["sqlite"] += 1
        elif "[postgres" in nodeid or "-postgres" in nodeid:
            per_backend["postgres"] += 1
    terminalreporter.write_line(
        f"database backends: {per_backend['sqlite']} passed on sqlite, "
        f"{per_backend['postgres']} passed on postgres")
