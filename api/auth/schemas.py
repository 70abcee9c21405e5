"""API key payloads."""

from __future__ import annotations

import datetime as dt

from pydantic import BaseModel, ConfigDict, Field

from api.auth.scopes import Scope


class KeyCreate(BaseModel):
    name: str = Field(min_length=1, max_length=200, examples=["historian connector"])
    scopes: list[Scope] = Field(min_length=1, examples=[["ingest"]])


class KeyRead(BaseModel):
    model_config = ConfigDict(from_attributes=True)

    id: int
    name: str
    prefix: str
    scopes: list[str]
    created_at: dt.datetime
    revoked_at: dt.datetime | None
    last_used_at: dt.datetime | None


class KeyCreated(KeyRead):
    key: str
    """The whole key. Shown once: only its hash is stored."""


class KeyList(BaseModel):
    keys: list[KeyRead]
