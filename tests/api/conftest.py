"""Database and app fixtures: every API test runs on SQLite and on PostgreSQL.

``db_url`` is parametrised over both backends for the whole session. PostgreSQL gets a
uniquely named scratch database on the server of ``LOSTWORK_TEST_PG_URL`` (created,
migrated with Alembic, dropped at the end); without that variable the PostgreSQL half
is skipped with a reason. Isolation: every table is emptied after each test (the code
under test commits for real, so rollback-based isolation would test something else).
"""

from __future__ import annotations

import os
import secrets
from collections.abc import Callable, Iterator

import pytest
from fastapi.testclient import TestClient
from sqlalchemy import Engine, create_engine, text
from sqlalchemy.engine import make_url
from sqlalchemy.orm import Session, sessionmaker

import api.models
from api.auth import service as auth_service
from api.core import migrate
from api.core.config import Settings
from api.core.db import create_db_engine, make_session_factory
from api.main import create_app

PG_ENV = "LOSTWORK_TEST_PG_URL"
UPLOAD_LIMIT = 64 * 1024
REQUEST_LIMIT = 256 * 1024
"""Small limits for the tests, so that the 413 tests send little."""


def _create_pg_database(base_url: str) -> tuple[str, Callable[[], None]]:
    url = make_url(base_url)
    name = f"lw_test_{secrets.token_hex(4)}"
    admin = create_engine(url, isolation_level="AUTOCOMMIT")
    with admin.connect() as conn:
        conn.execute(text(f'CREATE DATABASE "{name}"'))

    def drop() -> None:
        with admin.connect() as conn:
            conn.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
        admin.dispose()

    return url.set(database=name).render_as_string(hide_password=False), drop


@pytest.fixture(
    scope="session",
    params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)],
)
def db_url(
    request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory
) -> Iterator[str]:
    if request.param == "sqlite":
        url = f"sqlite:///{tmp_path_factory.mktemp('db') / 'lostwork.db'}"
        migrate.upgrade(url)
        yield url
        return
    base = os.environ.get(PG_ENV)
    if not base:
        pytest.skip(f"{PG_ENV} is not set: no PostgreSQL server to test against")
    url, drop = _create_pg_database(base)
    try:
        migrate.upgrade(url)
        yield url
    finally:
        drop()


@pytest.fixture(scope="session")
def engine(db_url: str) -> Iterator[Engine]:
    eng = create_db_engine(db_url)
    yield eng
    eng.dispose()


def _empty_all_tables(engine: Engine) -> None:
    tables = list(reversed(api.models.Base.metadata.sorted_tables))
    # DELETE, not TRUNCATE: on a few rows it is ten times faster on PostgreSQL (TRUNCATE
    # swaps every table's files). Ids are not reset; no test depends on them.
    with engine.begin() as conn:
        for table in tables:
            conn.execute(table.delete())


@pytest.fixture
def session_factory(engine: Engine) -> Iterator[sessionmaker[Session]]:
    yield make_session_factory(engine)
    _empty_all_tables(engine)


@pytest.fixture
def session(session_factory: sessionmaker[Session]) -> Iterator[Session]:
    with session_factory() as s:
        yield s


@pytest.fixture
def settings(db_url: str) -> Settings:
    return Settings(
        database_url=db_url,
        embedded_worker=False,
        upload_max_bytes=UPLOAD_LIMIT,
        request_max_bytes=REQUEST_LIMIT,
        interval_seconds=60,
    )


@pytest.fixture
def app(settings: Settings, session_factory: sessionmaker[Session]):
    return create_app(settings, session_factory=session_factory, mount_dashboard=False)


@pytest.fixture
def client(app) -> Iterator[TestClient]:
    with TestClient(app, raise_server_exceptions=False) as test_client:
        yield test_client


@pytest.fixture
def make_key(session_factory: sessionmaker[Session]) -> Callable[..., dict[str, str]]:
    """``make_key("read", "ingest")`` -> headers carrying a fresh key with those scopes."""

    def make(*scopes: str) -> dict[str, str]:
        with session_factory() as s:
            _, plaintext = auth_service.create_key(session=s, name="test", scopes=scopes)
        return {"Authorization": f"Bearer {plaintext}"}

    return make


@pytest.fixture
def admin(make_key: Callable[..., dict[str, str]]) -> dict[str, str]:
    return make_key("admin")


@pytest.fixture
def plant(client: TestClient, admin: dict[str, str]) -> dict:
    """The test plant of :mod:`tests.api.factories`, applied through the API."""
    from tests.api.factories import plant_document

    doc = plant_document()
    response = client.post("/api/v1/plants", json=doc, headers=admin)
    assert response.status_code == 200, response.text
    return doc
