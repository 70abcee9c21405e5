"""Upload report payloads."""

from __future__ import annotations

import datetime as dt
import enum
from typing import Any

from pydantic import BaseModel, ConfigDict

from api.core.problems import ErrorItem


class UploadMode(enum.StrEnum):
    PARTIAL = "partial"
    """Store every good cell; report the bad ones (default)."""
    ALL_OR_NOTHING = "all_or_nothing"
    """Store nothing if any problem is found."""


class UploadRead(BaseModel):
    model_config = ConfigDict(from_attributes=True)

    id: int
    plant: str
    filename: str
    sha256: str
    size_bytes: int
    mode: str
    status: str
    """``stored`` or ``rejected`` (nothing stored)."""
    created_at: dt.datetime
    api_key_id: int | None
    """The key that uploaded; None for the command line."""
    stored: int
    replaced: int
    unchanged: int
    rejected: int
    """Problems found: each a rejected cell, row (bad time) or column (unknown tag)."""
    errors: list[ErrorItem]
    notices: list[dict[str, Any]]
    units_recomputed: list[str]
    """Units whose results over the uploaded time range were queued for recompute."""


class UploadList(BaseModel):
    uploads: list[UploadRead]
