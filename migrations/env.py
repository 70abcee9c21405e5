"""Alembic environment: URL from lostwork's settings, metadata from its models.

The URL comes, in order, from an open connection handed over in
``config.attributes["connection"]`` (tests, ``api.core.migrate``), ``-x url=...`` on the
alembic command line, or ``Settings.database_url``.
"""

from __future__ import annotations

from alembic import context
from sqlalchemy import Connection

import api.models
from api.core.config import get_settings
from api.core.db import create_db_engine

config = context.config
target_metadata = api.models.Base.metadata


def _url() -> str:
    return context.get_x_argument(as_dictionary=True).get("url") or get_settings().database_url


def _configure(connection: Connection) -> None:
    context.configure(
        connection=connection,
        target_metadata=target_metadata,
        compare_type=True,
        # SQLite cannot ALTER most things: rebuild the table in a batch instead.
        render_as_batch=connection.dialect.name == "sqlite",
    )


def run_migrations_offline() -> None:
    context.configure(
        url=_url(),
        target_metadata=target_metadata,
        literal_binds=True,
        compare_type=True,
        dialect_opts={"paramstyle": "named"},
    )
    with context.begin_transaction():
        context.run_migrations()


def run_migrations_online() -> None:
    connection = config.attributes.get("connection")
    if connection is not None:
        _configure(connection)
        with context.begin_transaction():
            context.run_migrations()
        return
    engine = create_db_engine(_url())
    try:
        with engine.connect() as connection:
            _configure(connection)
            with context.begin_transaction():
                context.run_migrations()
    finally:
        engine.dispose()


if context.is_offline_mode():
    run_migrations_offline()
else:
    run_migrations_online()
