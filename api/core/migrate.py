"""Apply the Alembic migrations from code (``lostwork serve``/``db upgrade``, tests)."""

from __future__ import annotations

from pathlib import Path

from alembic import command
from alembic.config import Config
from sqlalchemy import Engine

from api.core.db import create_db_engine

PROJECT_ROOT = Path(__file__).resolve().parents[2]
ALEMBIC_INI = PROJECT_ROOT / "alembic.ini"


def alembic_config() -> Config:
    """The project's Alembic configuration, usable from any working directory."""
    config = Config(str(ALEMBIC_INI))
    config.set_main_option("script_location", str(PROJECT_ROOT / "migrations"))
    return config


def upgrade(
    url: str | None = None, *, engine: Engine | None = None, revision: str = "head"
) -> None:
    """Migrate the database at ``url`` (or behind ``engine``) to ``revision``."""
    own = engine is None
    if engine is None:
        if url is None:
            from api.core.config import get_settings

            url = get_settings().database_url
        engine = create_db_engine(url)
    try:
        with engine.begin() as connection:
            config = alembic_config()
            config.attributes["connection"] = connection
            command.upgrade(config, revision)
    finally:
        if own:
            engine.dispose()
