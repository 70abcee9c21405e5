"""Deployment settings, from environment variables prefixed ``LOSTWORK_``.

Physics defaults (dead state, reference temperature, interval of a plant) are domain
data stored on the plant, not settings; the ``interval_seconds`` here is only the
default given to a plant whose configuration names none.
"""

from __future__ import annotations

import ipaddress
from functools import lru_cache
from typing import Annotated

from pydantic import AliasChoices, Field, field_validator
from pydantic_settings import BaseSettings, NoDecode, SettingsConfigDict


class Settings(BaseSettings):
    """Everything a deployment may change, each with a working default."""

    model_config = SettingsConfigDict(
        env_prefix="LOSTWORK_", env_file=".env", extra="ignore", populate_by_name=True
    )

    database_url: str = Field(
        default="sqlite:///./lostwork.db",
        # DATABASE_URL alone is what container platforms usually inject.
        validation_alias=AliasChoices("LOSTWORK_DATABASE_URL", "DATABASE_URL", "database_url"),
    )
    """SQLAlchemy URL: the embedded SQLite file by default, or PostgreSQL
    (``postgresql+psycopg://user@host:5432/db``)."""
    interval_seconds: int = Field(default=60, ge=1, le=86_400)
    """Default averaging interval for plants that do not state one. [s]"""
    upload_max_bytes: int = Field(default=20 * 1024 * 1024, ge=1)
    """Largest shift-log file accepted by ``POST /api/v1/uploads``. [bytes]"""
    request_max_bytes: int = Field(default=64 * 1024 * 1024, ge=1)
    """Largest request body of any other route (JSON ingest). [bytes]"""
    webhook_allow_list: Annotated[list[str], NoDecode] = Field(default_factory=list)
    """Hosts or CIDR ranges webhooks may reach although private or loopback
    (comma-separated in the environment)."""
    webhook_timeout_seconds: float = Field(default=15.0, gt=0, le=300)
    """Timeout of one webhook delivery attempt (Standard Webhooks recommends 15 to 30 s). [s]"""
    webhook_max_age_seconds: float = Field(default=86_400.0, gt=0)
    """A webhook event still undelivered this long after it was created is marked
    failed (no more retries). [s]"""
    webhook_backoff_seconds: float = Field(default=5.0, gt=0)
    """First retry delay; doubles per attempt, with jitter. [s]"""
    webhook_backoff_max_seconds: float = Field(default=3_600.0, gt=0)
    """Longest delay between two attempts. [s]"""
    webhook_poll_seconds: float = Field(default=1.0, gt=0)
    """Pause of an idle delivery worker between looks at the outbox. [s]"""
    alert_stale_check_seconds: float = Field(default=30.0, gt=0)
    """How often the data-staleness rules are evaluated (a timer, not results). [s]"""
    log_level: str = "INFO"
    embedded_worker: bool = True
    """Run the compute worker as a thread inside ``lostwork serve``."""
    public_base_url: str = "http://127.0.0.1:8000"
    """Base URL printed by the CLI and used in links the service hands out."""
    host: str = "127.0.0.1"
    port: int = 8000
    dashboard_scopes: Annotated[list[str], NoDecode] = Field(
        default_factory=lambda: ["read", "ingest"]
    )
    """Scopes of the key ``lostwork serve`` issues to its in-process dashboard when
    ``LOSTWORK_DASHBOARD_API_KEY`` is not set (add ``admin`` to fit baselines from the
    browser). The dashboard itself has no login: keep it on loopback or behind a proxy
    that authenticates."""

    @field_validator("webhook_allow_list", "dashboard_scopes", mode="before")
    @classmethod
    def _split_list(cls, value: object) -> object:
        if isinstance(value, str):
            return [part.strip() for part in value.split(",") if part.strip()]
        return value

    @field_validator("webhook_allow_list")
    @classmethod
    def _check_hosts(cls, value: list[str]) -> list[str]:
        for entry in value:
            if "/" in entry:
                ipaddress.ip_network(entry, strict=False)  # raises ValueError naming it
        return value

    @field_validator("log_level")
    @classmethod
    def _upper(cls, value: str) -> str:
        level = value.upper()
        if level not in {"DEBUG", "INFO", "WARNING", "ERROR", "CRITICAL"}:
            raise ValueError(f"unknown log level {value!r}")
        return level

    @property
    def is_sqlite(self) -> bool:
        return self.database_url.startswith("sqlite")


@lru_cache
def get_settings() -> Settings:
    """The process-wide settings, read once from the environment."""
    return Settings()
