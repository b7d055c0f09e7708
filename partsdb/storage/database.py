"""Opening a database: where it lives, engine settings, schema upgrades, sessions, read-only.

The default is a SQLite file in the per-user data directory (platformdirs); ``--db`` (a path or
any SQLAlchemy URL) and the ``PARTSDB_DB`` environment variable override it. Opening a database
brings its schema to the newest Alembic revision, with a one-line notice when it changed.
"""

from __future__ import annotations

import os
import random
import re
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any, TypeVar

from sqlalchemy import create_engine, event, inspect
from sqlalchemy.engine import URL, Engine, make_url
from sqlalchemy.exc import DBAPIError, OperationalError
from sqlalchemy.orm import Session, sessionmaker

from partsdb.errors import EXIT_INVALID, EnvironmentProblem

T = TypeVar("T")
ENV_VAR = "PARTSDB_DB"
SQLITE_BUSY_TIMEOUT_MS = 15_000
MIGRATIONS = Path(__file__).with_name("migrations")


class DatabaseError(EnvironmentProblem):
    """A database problem worth a clear one-line message (never a traceback)."""


class ReadOnlyError(DatabaseError):
    """A change refused because the database was opened read-only (a refused request: exit 2)."""

    exit_code = EXIT_INVALID


def default_path() -> Path:
    from platformdirs import user_data_dir

    return Path(user_data_dir("partsdb", appauthor=False)) / "partsdb.sqlite"


def resolve_url(target: str | os.PathLike[str] | None) -> URL:
    """A SQLAlchemy URL from a path, a URL, ``$PARTSDB_DB`` or the per-user default."""
    if target is None:
        target = os.environ.get(ENV_VAR) or default_path()
    text = os.fspath(target)
    if "://" in text:
        try:
            return make_url(text)
        except Exception as err:
            raise DatabaseError(f"--db: {mask_url(text)!r} is not a database URL ({err})") from err
    path = Path(text).expanduser().resolve()
    return URL.create("sqlite", database=str(path))


def mask_url(url: str | URL) -> str:
    """The URL with any password replaced by ***, for messages and logs."""
    if isinstance(url, URL):
        return url.render_as_string(hide_password=True)
    return re.sub(r"(://[^:/@]+:)[^@]*@", r"\1***@", url)


def _sqlite_pragmas(dbapi_connection: Any, _record: Any) -> None:
    cursor = dbapi_connection.cursor()
    cursor.execute("PRAGMA foreign_keys=ON")
    cursor.execute(f"PRAGMA busy_timeout={SQLITE_BUSY_TIMEOUT_MS}")
    cursor.execute("PRAGMA journal_mode=WAL")
    # NORMAL is durable against application crashes in WAL mode (SQLite docs, "PRAGMA
    # synchronous"); a power cut may lose the last transactions but never corrupts the file.
    cursor.execute("PRAGMA synchronous=NORMAL")
    cursor.close()


def make_engine(url: URL) -> Engine:
    if url.get_backend_name() == "sqlite":
        if url.database and url.database != ":memory:":
            Path(url.database).parent.mkdir(parents=True, exist_ok=True)
        # Python's sqlite3 opens a transaction before the first write; every stock change is
        # one guarded UPDATE (see services/stock.py), so it needs nothing stronger. The
        # timeout is the busy wait for another writer's lock.
        engine = create_engine(url, connect_args={"timeout": SQLITE_BUSY_TIMEOUT_MS / 1000})
        event.listen(engine, "connect", _sqlite_pragmas)
        return engine
    return create_engine(url, pool_pre_ping=True)


def alembic_config(connection: Any) -> Any:
    from alembic.config import Config

    config = Config()
    config.set_main_option("script_location", str(MIGRATIONS))
    config.attributes["connection"] = connection
    return config


SCHEMA_HEAD = "0005"
"""The newest migration revision. Opening a database compares its ``alembic_version`` with
this by plain SQL, so Alembic (about 0.2 s to import) loads only when an upgrade is due; a test
checks that it equals Alembic's own head."""


def head_revision() -> str:
    """The newest revision according to Alembic's scripts (slow: imports Alembic)."""
    from alembic.script import ScriptDirectory

    return ScriptDirectory.from_config(alembic_config(None)).get_current_head() or ""


def current_revision(engine: Engine) -> str | None:
    """The database's schema revision (None for an empty database), read with plain SQL."""
    with engine.connect() as conn:
        if not inspect(conn).has_table("alembic_version"):
            return None
        return conn.exec_driver_sql("SELECT version_num FROM alembic_version").scalar()


def upgrade(engine: Engine, revision: str = "head") -> None:
    from alembic import command

    with engine.begin() as conn:
        command.upgrade(alembic_config(conn), revision)


class Database:
    """An open database: an engine plus a session factory; sessions commit on success."""

    def __init__(self, engine: Engine, read_only: bool = False) -> None:
        self.engine = engine
        self.read_only = read_only
        self._sessions = sessionmaker(engine, expire_on_commit=False)
        if read_only:
            event.listen(engine, "before_cursor_execute", _refuse_writes, retval=False)

    @property
    def url(self) -> URL:
        return self.engine.url

    @property
    def dialect(self) -> str:
        return self.engine.dialect.name

    def describe(self) -> str:
        return mask_url(self.engine.url)

    @contextmanager
    def session(self) -> Iterator[Session]:
        """One transaction: committed when the block ends, rolled back on any error."""
        session = self._sessions()
        try:
            yield session
            session.commit()
        except OperationalError as err:
            session.rollback()
            raise _friendly(err, self) from err
        except DBAPIError as err:
            # A rule of the database that the input checks (limits.py) did not catch first:
            # one line of the driver's message, never the SQL, the parameters or a link.
            session.rollback()
            raise DatabaseError(f"the database refused the change, nothing was changed: "
                                f"{_first_line(err)}") from err
        except BaseException:
            session.rollback()
            raise
        finally:
            session.close()

    def transact(self, work: Callable[[Session], T], attempts: int = 8) -> T:
        """Run ``work(session)`` as one transaction, re-running it from the start when the
        server aborted it as a serialization failure or deadlock (PostgreSQL SQLSTATE 40001 /
        40P01, PostgreSQL docs Appendix A); ``work`` must therefore only touch the database.
        SQLite needs no re-run: a locked database is waited for up to the busy timeout."""
        for attempt in range(attempts):
            try:
                with self.session() as session:
                    return work(session)
            except DatabaseError as err:
                if is_transient(err.__cause__) and attempt + 1 < attempts:
                    # Random back-off so the transactions that collided do not collide again.
                    time.sleep(random.uniform(0.0, 0.02 * 2 ** attempt))
                    continue
                raise
        raise AssertionError("unreachable")  # pragma: no cover

    def dispose(self) -> None:
        self.engine.dispose()


TRANSIENT_SQLSTATES = frozenset({"40001", "40P01"})
"""serialization_failure, deadlock_detected: the transaction may simply be run again."""


def is_transient(err: BaseException | None) -> bool:
    """Whether a database error means "run the same transaction again" (see TRANSIENT_SQLSTATES)."""
    orig = getattr(err, "orig", err)
    return getattr(orig, "sqlstate", None) in TRANSIENT_SQLSTATES


_WRITE = re.compile(r"^\s*(INSERT|UPDATE|DELETE|CREATE|DROP|ALTER|REPLACE)\b", re.IGNORECASE)


def _refuse_writes(conn: Any, cursor: Any, statement: str, *args: Any) -> None:
    if _WRITE.match(statement):
        raise ReadOnlyError("this database is open read-only (--read-only): nothing was changed")


def _first_line(err: DBAPIError) -> str:
    text = str(err.orig) if err.orig is not None else str(err)
    return (text.strip().splitlines() or ["(no message)"])[0]


def _friendly(err: OperationalError, db: Database) -> DatabaseError:
    text = str(err.orig) if err.orig is not None else str(err)
    if "locked" in text or "busy" in text:
        return DatabaseError(
            f"the database is busy (another partsdb is writing) and stayed locked for "
            f"{SQLITE_BUSY_TIMEOUT_MS / 1000:.0f} s; nothing was changed, try again")
    return DatabaseError(f"database error on {db.describe()}: {text.splitlines()[0]}")


def open_database(target: str | os.PathLike[str] | None = None, *, read_only: bool = False,
                  upgrade_schema: bool = True,
                  notify: Callable[[str], None] | None = None) -> Database:
    """Open (creating if needed) a database and bring its schema to the newest revision."""
    url = resolve_url(target)
    engine = make_engine(url)
    try:
        if upgrade_schema:
            current = current_revision(engine)
            head = SCHEMA_HEAD
            if current != head:
                if read_only:
                    raise ReadOnlyError(
                        f"the database {mask_url(url)} needs a schema upgrade "
                        f"({current or 'empty'} -> {head}); open it once without --read-only")
                fresh = current is None and not inspect(engine).get_table_names()
                upgrade(engine)
                if notify is not None:
                    notify(f"partsdb: created database {mask_url(url)}" if fresh else
                           f"partsdb: upgraded database schema {current} -> {head}")
    except OperationalError as err:
        engine.dispose()
        raise DatabaseError(f"cannot open database {mask_url(url)}: "
                            f"{str(err.orig).splitlines()[0]}") from err
    return Database(engine, read_only=read_only)
