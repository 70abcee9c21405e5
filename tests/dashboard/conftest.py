"""Fixtures: the real lostwork API in-process (temporary SQLite, the demo plant, a key)."""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import httpx
import pytest

from api.auth import service as auth_service
from api.core import migrate
from api.core.config import Settings
from api.examples import DEMO_PLANT
from api.main import create_app
from api.plants import service as plant_service
from api.plants.fileformat import load_yaml
from dashboard.client import LostworkClient


@dataclass
class LiveApi:
    """The service's FastAPI app (dashboard mounted), an admin key, a client bound to it."""

    app: Any
    key: str
    client: LostworkClient


@pytest.fixture
def live_api(tmp_path: Path) -> Iterator[LiveApi]:
    url = f"sqlite:///{tmp_path / 'lostwork.db'}"
    migrate.upgrade(url)
    settings = Settings(database_url=url, embedded_worker=False)
    app = create_app(settings)
    with app.state.session_factory() as session:
        plant_service.apply_plant(
            session=session,
            document=load_yaml(DEMO_PLANT.read_text(encoding="utf-8")),
            default_interval_s=60,
            dry_run=False,
        )
        _, key = auth_service.create_key(session=session, name="dashboard test", scopes=["admin"])
    client = LostworkClient("http://in-process", key, transport=httpx.ASGITransport(app=app))
    yield LiveApi(app=app, key=key, client=client)
    app.state.engine.dispose()
