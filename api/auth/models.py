"""API keys: only a hash of the secret is stored."""

from __future__ import annotations

import datetime as dt

from sqlalchemy import JSON, Integer, String
from sqlalchemy.orm import Mapped, mapped_column

from api.core.db import Base, UTCDateTime, utcnow


class ApiKey(Base):
    """A bearer key ``lw_<prefix>_<secret>``.

    The prefix is public and indexes the lookup; the stored hash is sha256 of the whole
    key. A plain fast hash is enough because the secret is 256 random bits: slow password
    hashes (bcrypt, argon2) defend guessable human passwords, which these are not, and
    would cost every request tens of milliseconds.
    """

    __tablename__ = "api_keys"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(200))
    prefix: Mapped[str] = mapped_column(String(16), unique=True)
    secret_sha256: Mapped[str] = mapped_column(String(64))
    scopes: Mapped[list[str]] = mapped_column(JSON)
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)
    revoked_at: Mapped[dt.datetime | None] = mapped_column(UTCDateTime(), default=None)
    last_used_at: Mapped[dt.datetime | None] = mapped_column(UTCDateTime(), default=None)
