"""Database engine, sessions and the declarative base.

Tables (one module per domain; ``api.models`` imports them all for Alembic):

==================  ======================================================================
``plants``          a site: slug, IANA time zone, dead state (t0_k, p0_pa), optional
                    ambient tag for a per-interval T0, atmosphere for gauge units,
                    interval length, fuel price per GJ (HHV) and currency.
``fuels``           per plant: the fuel section of the plant file as JSON plus the
                    derived heating values, density and exergy ratio the models use.
``tags``            per plant, name unique per plant: unit of measure as configured, the SI
                    unit of the role(s) it feeds, plausible bounds, instrument uncertainty.
``units``           slug unique across the installation (``/api/v1/units/{slug}``), kind
                    from the engine catalogue, parameters JSON, plant, optional fuel.
``unit_bindings``   (unit, role) -> tag.
``readings``        (tag_id, t_ms) -> value in SI. t_ms = UTC epoch milliseconds.
                    No foreign key on purpose: the per-row referential check halves the
                    bulk upsert rate on PostgreSQL; the service validates tags and deletes
                    a tag's readings itself.
``work_spans``      durable queue of dirty (unit, start_ms, end_ms) spans with a lease
                    (owner, expiry) and attempt count; an expired lease is claimable again.
``results``         long format (unit_id, metric, t_ms) -> value in SI; the integer quality
                    flags of an interval are the metric ``flags``. No foreign key either,
                    for the same reason as ``readings``.
``result_meta``     per unit: formulation and engine version of its stored results.
``uploads``         shift-log uploads: who, when, file name, sha256, size, counts, errors,
                    notices and the units marked for recompute.
``api_keys``        name, public prefix, sha256 of the secret, scopes, created/revoked.
==================  ======================================================================

Timestamps: UTC epoch milliseconds (BigInteger) in the two high-volume tables
(``readings``, ``results``) and in ``work_spans``; timezone-aware ``DateTime`` (always
UTC) elsewhere.

SQLite (the embedded default) gets WAL journaling so readers never wait for the writer,
foreign keys switched on, and a busy timeout so two writers queue instead of failing.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterator
from contextlib import contextmanager
from functools import lru_cache
from typing import Any

from sqlalchemy import BigInteger, DateTime, Engine, Integer, MetaData, create_engine, event
from sqlalchemy.orm import DeclarativeBase, Session, sessionmaker
from sqlalchemy.types import TypeDecorator

from api.core.config import get_settings

SQLITE_BUSY_TIMEOUT_MS = 10_000

# Stable constraint names, so that migrations can name what they alter or drop.
NAMING_CONVENTION = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_N_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}


class Base(DeclarativeBase):
    """Declarative base of every lostwork table."""

    metadata = MetaData(naming_convention=NAMING_CONVENTION)


class UTCDateTime(TypeDecorator[dt.datetime]):
    """A timezone-aware UTC datetime on every backend.

    SQLite keeps no offset, so values come back naive; this type stores UTC and hands
    back aware datetimes, and refuses naive input rather than guessing its zone.
    """

    impl = DateTime(timezone=True)
    cache_ok = True

    def process_bind_param(self, value: dt.datetime | None, dialect: Any) -> dt.datetime | None:
        if value is None:
            return None
        if value.tzinfo is None:
            raise ValueError("naive datetime given to a UTC column; attach a time zone")
        return value.astimezone(dt.UTC)

    def process_result_value(self, value: dt.datetime | None, dialect: Any) -> dt.datetime | None:
        if value is None:
            return None
        if value.tzinfo is None:
            return value.replace(tzinfo=dt.UTC)
        return value.astimezone(dt.UTC)


# SQLite only makes an INTEGER PRIMARY KEY an auto-incrementing rowid alias.
BigIntPK = BigInteger().with_variant(Integer(), "sqlite")


def utcnow() -> dt.datetime:
    return dt.datetime.now(dt.UTC)


def _sqlite_pragmas(dbapi_connection: Any, _record: Any) -> None:
    cursor = dbapi_connection.cursor()
    cursor.execute("PRAGMA journal_mode=WAL")
    cursor.execute("PRAGMA foreign_keys=ON")
    cursor.execute(f"PRAGMA busy_timeout={SQLITE_BUSY_TIMEOUT_MS}")
    cursor.execute("PRAGMA synchronous=NORMAL")  # safe with WAL: a crash loses no commit
    cursor.close()


def create_db_engine(url: str, **kwargs: Any) -> Engine:
    """An engine for ``url`` with lostwork's per-backend connection settings."""
    if url.startswith("sqlite"):
        connect_args = kwargs.pop("connect_args", {})
        # The request thread pool and the embedded worker share the engine.
        connect_args.setdefault("check_same_thread", False)
        connect_args.setdefault("timeout", SQLITE_BUSY_TIMEOUT_MS / 1000)
        engine = create_engine(url, connect_args=connect_args, **kwargs)
        event.listen(engine, "connect", _sqlite_pragmas)
        return engine
    kwargs.setdefault("pool_pre_ping", True)
    return create_engine(url, **kwargs)


@lru_cache
def get_engine() -> Engine:
    """The process-wide engine for the configured database."""
    return create_db_engine(get_settings().database_url)


def make_session_factory(engine: Engine) -> sessionmaker[Session]:
    return sessionmaker(bind=engine, expire_on_commit=False, autoflush=False)


@lru_cache
def get_session_factory() -> sessionmaker[Session]:
    return make_session_factory(get_engine())


def lock_for_write(session: Session) -> None:
    """Take SQLite's write lock now, at the start of a read-then-write transaction.

    pysqlite opens a transaction only at the first data-changing statement, so the
    reads before it see the latest data; but once a transaction has read, a second
    writer committing first makes the upgrade to a write fail at once ("database is
    locked") instead of waiting. ``BEGIN IMMEDIATE`` waits (``busy_timeout``) for the
    lock up front. No-op on PostgreSQL, and when a transaction is already open.
    """
    connection = session.connection()
    if connection.dialect.name != "sqlite":
        return
    dbapi = connection.connection.dbapi_connection
    if dbapi is not None and not dbapi.in_transaction:
        dbapi.execute("BEGIN IMMEDIATE")


@contextmanager
def session_scope(factory: sessionmaker[Session] | None = None) -> Iterator[Session]:
    """A session for background work (worker, CLI): commit on success, roll back on error.

    Request handlers never call this; they receive their session from ``api.deps.get_db``.
    """
    session = (factory or get_session_factory())()
    try:
        yield session
        session.commit()
    except BaseException:
        session.rollback()
        raise
    finally:
        session.close()
