"""Opening a database: where it lives, engine settings, schema upgrades, sessions, read-only.

The default is a SQLite file in the per-user data directory (platformdirs); ``--db`` (a path or
any SQLAlchemy URL) and the ``PARTSDB_DB`` environment variable override it.

Schema upgrades: opening an empty database creates the newest schema. An older SQLite file (one
bench, one host) is upgraded on open with a one-line notice. A PostgreSQL database is shared by
benches that may run different partsdb versions, so ordinary commands never upgrade it: they
stop with one line asking for ``partsdb upgrade``, which upgrades explicitly. A database whose
schema is newer than this partsdb knows is refused in one line (update partsdb).
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


class SchemaMismatch(DatabaseError):
    """The database's schema is not the one this partsdb works with (exit 3); nothing changed."""


class ReadOnlyError(DatabaseError):
    """A change refused because the database was opened read-only (a refused request: exit 2)."""

    exit_code = EXIT_INVALID


def default_path() -> Path:
    from platformdirs import user_data_dir

    return Path(user_data_dir("partsdb", appauthor=False)) / "partsdb.sqlite"


SUPPORTED = {"sqlite": ("pysqlite",), "postgresql": ("psycopg",)}
"""Backends and the drivers partsdb is built and tested with."""

_SECRETS: set[str] = set()
"""Passwords of every URL resolved in this process; :func:`mask_url` blanks them in any text."""


def _split_netloc(text: str) -> URL | None:
    """A URL whose password holds an unescaped ``@`` (``user:p@ss@host``), parsed the way its
    author meant: everything up to the last ``@`` before the host is user and password."""
    scheme, _, rest = text.partition("://")
    netloc, slash, path = rest.partition("/")
    if netloc.count("@") < 2:
        return None
    creds, _, hostport = netloc.rpartition("@")
    user, _, password = creds.partition(":")
    from urllib.parse import quote

    return make_url(f"{scheme}://{quote(user, safe='')}:{quote(password, safe='')}@{hostport}"
                    f"{slash}{path}")


def resolve_url(target: str | os.PathLike[str] | None) -> URL:
    """A SQLAlchemy URL from a path, a URL, ``$PARTSDB_DB`` or the per-user default.

    Only SQLite and PostgreSQL (driver psycopg) are accepted; ``postgresql://`` means
    ``postgresql+psycopg://``. Anything else is a one-line :class:`DatabaseError`."""
    if target is None:
        target = os.environ.get(ENV_VAR) or default_path()
    text = os.fspath(target)
    if "://" in text:
        _remember_secrets(text)
        try:
            url = _split_netloc(text) or make_url(text)
        except Exception as err:
            raise DatabaseError(f"--db: {mask_url(text)!r} is not a database URL; expected a "
                                "file path, sqlite:///PATH or postgresql+psycopg://USER@HOST/DB"
                                ) from err
        if url.password:
            _SECRETS.add(str(url.password))
        return _supported(url)
    path = Path(text).expanduser().resolve()
    return URL.create("sqlite", database=str(path))


def _remember_secrets(text: str) -> None:
    netloc = text.partition("://")[2].split("/", 1)[0]
    creds = netloc.rpartition("@")[0]
    password = creds.partition(":")[2]
    if password:
        from urllib.parse import unquote

        _SECRETS.update({password, unquote(password)})


def _supported(url: URL) -> URL:
    backend, _, driver = url.drivername.partition("+")
    if backend == "postgresql" and not driver:
        url = url.set(drivername="postgresql+psycopg")
        driver = "psycopg"
    if backend == "sqlite" and not driver:
        driver = "pysqlite"
    if backend not in SUPPORTED:
        raise DatabaseError(f"--db: {mask_url(url)!r}: {backend!r} is not a database partsdb "
                            "supports; expected a SQLite file or postgresql+psycopg://...")
    if driver not in SUPPORTED[backend]:
        raise DatabaseError(f"--db: {mask_url(url)!r}: driver {driver!r} is not supported; use "
                            + ("postgresql+psycopg://..." if backend == "postgresql"
                               else "a file path or sqlite:///PATH"))
    if backend == "postgresql":
        from importlib.util import find_spec

        if find_spec("psycopg") is None:
            raise DatabaseError("--db: PostgreSQL needs the psycopg driver, which is not "
                                "installed; install the postgres extra: "
                                "pip install 'partsdb-drawers[postgres]'")
    return url


def mask_url(url: str | URL) -> str:
    """The URL (or any message text) with every password replaced by ***.

    Passwords of URLs resolved in this process are blanked wherever they appear (a driver may
    quote them in its own error text); ``scheme://user:secret@`` forms are masked up to the
    last ``@`` of the address, so a password holding an unescaped ``@`` is hidden whole."""
    if isinstance(url, URL):
        return url.render_as_string(hide_password=True)
    text = re.sub(r"(://[^:/@\s'\"]*:)[^\s'\"/]*@", r"\1***@", url)
    text = re.sub(r"(password\s*=\s*)('[^']*'|\S+)", r"\1***", text, flags=re.IGNORECASE)
    for secret in sorted(_SECRETS, key=len, reverse=True):
        if len(secret) >= 2:
            from urllib.parse import quote

            for form in {secret, quote(secret, safe=""), quote(secret)}:
                text = text.replace(form, "***")
    return text


def _sqlite_pragmas(dbapi_connection: Any, _record: Any) -> None:
    cursor = dbapi_connection.cursor()
    cursor.execute("PRAGMA foreign_keys=ON")
    cursor.execute(f"PRAGMA busy_timeout={SQLITE_BUSY_TIMEOUT_MS}")
    cursor.execute("PRAGMA journal_mode=WAL")
    # NORMAL is durable against application crashes in WAL mode (SQLite docs, "PRAGMA
    # synchronous"); a power cut may lose the last transactions but never corrupts the file.
    cursor.execute("PRAGMA synchronous=NORMAL")
    cursor.close()


def _sqlite_read_only_pragmas(dbapi_connection: Any, _record: Any) -> None:
    # The journal mode is left as the file has it (a DELETE-journal backup stays one), and
    # query_only refuses every change at the engine level (SQLite docs, "PRAGMA query_only").
    cursor = dbapi_connection.cursor()
    cursor.execute("PRAGMA foreign_keys=ON")
    cursor.execute(f"PRAGMA busy_timeout={SQLITE_BUSY_TIMEOUT_MS}")
    cursor.execute("PRAGMA query_only=ON")
    cursor.close()


def _on_read_only_mount(path: Path) -> bool:
    try:
        return bool(os.statvfs(path.parent).f_flag & os.ST_RDONLY)
    except (OSError, AttributeError):  # no statvfs (Windows)
        return False


def make_engine(url: URL, read_only: bool = False) -> Engine:
    """An engine for ``url``. ``read_only`` opens SQLite with ``mode=ro`` (the file must exist;
    nothing is created) and runs every PostgreSQL transaction READ ONLY."""
    if url.get_backend_name() == "sqlite":
        timeout = SQLITE_BUSY_TIMEOUT_MS / 1000
        if read_only and url.database and url.database != ":memory:":
            import sqlite3
            from urllib.parse import quote

            path = Path(url.database)
            if not path.is_file():
                raise DatabaseError(f"the database {str(path)!r} does not exist; nothing was "
                                    "created (opened read-only)")
            uri = f"file:{quote(str(path))}?mode=ro"

            def connect() -> sqlite3.Connection:
                conn = sqlite3.connect(uri, uri=True, timeout=timeout, check_same_thread=False)
                try:
                    conn.execute("PRAGMA schema_version").fetchone()
                except sqlite3.OperationalError:
                    if not _on_read_only_mount(path):
                        raise
                    # A WAL database on a read-only mount: its -shm cannot be made, but nothing
                    # can change the file either, so it is read as immutable (SQLite docs, "URI
                    # Filenames", immutable=1).
                    conn.close()
                    conn = sqlite3.connect(f"{uri}&immutable=1", uri=True, timeout=timeout,
                                           check_same_thread=False)
                return conn

            engine = create_engine(url, creator=connect)
            event.listen(engine, "connect", _sqlite_read_only_pragmas)
            return engine
        if url.database and url.database != ":memory:":
            try:
                Path(url.database).parent.mkdir(parents=True, exist_ok=True)
            except OSError as err:
                raise DatabaseError(f"cannot create the folder of the database "
                                    f"{url.database!r}: {err.strerror}") from err
        # Python's sqlite3 opens a transaction before the first write; every stock change is
        # one guarded UPDATE (see services/stock.py), so it needs nothing stronger. The
        # timeout is the busy wait for another writer's lock.
        engine = create_engine(url, connect_args={"timeout": timeout})
        event.listen(engine, "connect", _sqlite_pragmas)
        return engine
    connect_args: dict[str, Any] = {}
    if read_only and url.get_backend_name() == "postgresql":
        # Every transaction READ ONLY (PostgreSQL docs, "default_transaction_read_only").
        connect_args["options"] = "-c default_transaction_read_only=on"
    try:
        return create_engine(url, pool_pre_ping=True, connect_args=connect_args)
    except Exception as err:  # a missing driver module, a bad option in the URL
        raise DatabaseError(f"cannot use database {mask_url(url)}: "
                            f"{mask_url(str(err)).splitlines()[0]}") from err


def alembic_config(connection: Any) -> Any:
    from alembic.config import Config

    config = Config()
    config.set_main_option("script_location", str(MIGRATIONS))
    config.attributes["connection"] = connection
    return config


SCHEMA_HEAD = "0007"
"""The newest migration revision. Opening a database compares its ``alembic_version`` with
this by plain SQL, so Alembic (about 0.2 s to import) loads only when an upgrade is due; a test
checks that it equals Alembic's own head."""


def known_revisions() -> tuple[str, ...]:
    """The revisions this partsdb's migration scripts hold, oldest first (from file names such as
    ``0002_swap_log.py``, without importing Alembic)."""
    return tuple(sorted(p.name.split("_", 1)[0] for p in (MIGRATIONS / "versions").glob("*.py")))


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


def downgrade(engine: Engine, revision: str) -> None:
    """Back to an older revision (tests and a maintainer's shell; no command calls it)."""
    from alembic import command

    with engine.begin() as conn:
        command.downgrade(alembic_config(conn), revision)


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
            session.rollback()
            if _sqlstate(err) == INSUFFICIENT_PRIVILEGE:
                raise PermissionRefused(
                    f"the server refused: {_first_line(err)} (the role in use may only read); "
                    "nothing was changed") from err
            # A rule of the database that the input checks (limits.py) did not catch first:
            # one line of the driver's message, never the SQL, the parameters or a link.
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


INSUFFICIENT_PRIVILEGE = "42501"
"""PostgreSQL SQLSTATE for a statement the role has no privilege for (Appendix A)."""


class PermissionRefused(DatabaseError):
    """The server refused a change the role may not make (a read-only role): exit 2."""

    exit_code = EXIT_INVALID


def _sqlstate(err: BaseException | None) -> str | None:
    return getattr(getattr(err, "orig", err), "sqlstate", None)


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
    return mask_url((text.strip().splitlines() or ["(no message)"])[0])


def _friendly(err: OperationalError, db: Database) -> DatabaseError:
    text = str(err.orig) if err.orig is not None else str(err)
    if db.read_only and "readonly" in text.replace("-", "").replace(" ", ""):
        return ReadOnlyError("this database is open read-only (--read-only): nothing was changed")
    if "locked" in text or "busy" in text:
        return DatabaseError(
            f"the database is busy (another partsdb is writing) and stayed locked for "
            f"{SQLITE_BUSY_TIMEOUT_MS / 1000:.0f} s; nothing was changed, try again")
    return DatabaseError(f"database error on {db.describe()}: "
                         f"{mask_url(text).splitlines()[0] if text else type(err).__name__}")


def open_database(target: str | os.PathLike[str] | None = None, *, read_only: bool = False,
                  upgrade_schema: bool | None = None,
                  notify: Callable[[str], None] | None = None) -> Database:
    """Open a database, checking its schema revision.

    Without ``read_only`` a missing SQLite file is created. With ``read_only`` nothing is ever
    written: a missing file, an empty database or an older schema is refused with a message
    saying which command creates or upgrades it. ``upgrade_schema``: None (ordinary commands)
    upgrades an older SQLite file but refuses an older server database with
    :class:`SchemaMismatch`; True upgrades either (``partsdb upgrade``); False skips the check.
    A schema newer than this partsdb is always refused (exit 3).
    """
    url = resolve_url(target)
    engine = make_engine(url, read_only=read_only)
    try:
        if upgrade_schema is not False or read_only:
            _check_schema(engine, url, read_only, upgrade_schema, notify)
    except (OperationalError, DBAPIError) as err:
        engine.dispose()
        text = str(getattr(err, "orig", None) or err)
        hint = ""
        if (url.get_backend_name() == "sqlite" and url.database and not read_only
                and _on_read_only_mount(Path(url.database))):
            hint = " (it is on a read-only file system: add --read-only to look things up)"
        raise DatabaseError(f"cannot open database {mask_url(url)}: "
                            f"{mask_url(text).splitlines()[0] if text else type(err).__name__}"
                            f"{hint}") from err
    except BaseException:
        engine.dispose()
        raise
    return Database(engine, read_only=read_only)


def _check_schema(engine: Engine, url: URL, read_only: bool, upgrade_schema: bool | None,
                  notify: Callable[[str], None] | None) -> None:
    current = current_revision(engine)
    head = SCHEMA_HEAD
    if current == head:
        return
    if current is not None and current not in known_revisions():
        raise SchemaMismatch(
            f"the database {mask_url(url)} has schema {current}, newer than this partsdb "
            f"{_version()} knows ({head}); update partsdb on this machine")
    if read_only:
        what = ("holds no partsdb schema" if current is None else
                f"has an older schema ({current}; this partsdb uses {head})")
        command = "init" if current is None else "upgrade"
        raise ReadOnlyError(
            f"the database {mask_url(url)} {what}; nothing was changed (opened read-only); "
            f"`partsdb --db PATH {command}` without --read-only "
            + ("creates" if current is None else "upgrades") + " it")
    fresh = current is None and not inspect(engine).get_table_names()
    if not fresh and upgrade_schema is None and url.get_backend_name() != "sqlite":
        raise SchemaMismatch(
            f"the database {mask_url(url)} has schema {current or 'none'}, older than this "
            f"partsdb's {head}; run `partsdb upgrade` once (after a backup), then every bench "
            "needs this version")
    try:
        upgrade(engine)
    except OperationalError:
        raise
    except Exception as err:  # alembic CommandError and the like
        raise DatabaseError(f"cannot upgrade the schema of {mask_url(url)}: "
                            f"{mask_url(str(err)).splitlines()[0]}") from err
    if notify is not None:
        notify(f"partsdb: created database {mask_url(url)}" if fresh else
               f"partsdb: upgraded database schema {current} -> {head}")


def _version() -> str:
    from partsdb import __version__

    return __version__
