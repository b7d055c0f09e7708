"""The PostgreSQL database ``partsdb bench --db URL`` runs on: refused unless empty, emptied
at the end. Only ever a throwaway database: nothing is written before it is found empty."""

from __future__ import annotations

from typing import Any


def _server_engine(url: str) -> Any:
    from partsdb.errors import InvalidInput
    from partsdb.storage.database import make_engine, mask_url, resolve_url

    resolved = resolve_url(url)
    if resolved.get_backend_name() != "postgresql":
        raise InvalidInput(f"--db: {mask_url(resolved)} is not valid; expected a PostgreSQL URL "
                           "of an empty database (without --db the bench uses SQLite files "
                           "of its own)")
    return make_engine(resolved)


def check_empty_server(url: str) -> None:
    """Refuse (exit 2) a PostgreSQL database that holds any table or view: the bench empties
    its database before each import and at the end, so it runs only on a throwaway one.
    Nothing is written before this check passes."""
    from sqlalchemy import inspect

    from partsdb.errors import InvalidInput
    from partsdb.storage.database import mask_url

    engine = _server_engine(url)
    try:
        seen = inspect(engine)
        found = [*seen.get_table_names(), *seen.get_view_names()]
    finally:
        engine.dispose()
    if found:
        raise InvalidInput(
            f"--db: {mask_url(url)} is not empty ({len(found)} tables, e.g. "
            f"{sorted(found)[0]}); expected an empty database the bench may fill and empty; "
            "nothing was touched")


def drop_bench_tables(url: str) -> None:
    """Drop every table of the database at ``url`` (only ever one that
    :func:`check_empty_server` found empty: every table in it is the bench's)."""
    from sqlalchemy import inspect

    engine = _server_engine(url)
    try:
        with engine.begin() as conn:
            for name in inspect(conn).get_table_names():
                conn.exec_driver_sql(f'DROP TABLE IF EXISTS "{name}" CASCADE')
    finally:
        engine.dispose()
