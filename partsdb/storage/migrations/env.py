"""Alembic environment: runs on the connection that partsdb.storage.database hands over."""

from __future__ import annotations

from alembic import context
from sqlalchemy import engine_from_config, pool

from partsdb.storage.models import Base

config = context.config
target_metadata = Base.metadata


def run_migrations_online() -> None:
    connection = config.attributes.get("connection")
    if connection is None:  # plain `alembic upgrade` from a shell, with sqlalchemy.url set
        engine = engine_from_config(config.get_section(config.config_ini_section) or {},
                                    prefix="sqlalchemy.", poolclass=pool.NullPool)
        with engine.connect() as conn:
            _run(conn)
        return
    _run(connection)


def _run(connection) -> None:  # type: ignore[no-untyped-def]
    context.configure(connection=connection, target_metadata=target_metadata,
                      render_as_batch=connection.dialect.name == "sqlite")
    with context.begin_transaction():
        context.run_migrations()


run_migrations_online()
