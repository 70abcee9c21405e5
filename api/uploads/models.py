"""Shift-log uploads: the record and report of every file received."""

from __future__ import annotations

import datetime as dt
from typing import Any

from sqlalchemy import JSON, ForeignKey, Integer, String
from sqlalchemy.orm import Mapped, mapped_column

from api.core.db import Base, UTCDateTime, utcnow


class Upload(Base):
    __tablename__ = "uploads"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    plant_id: Mapped[int] = mapped_column(ForeignKey("plants.id", ondelete="CASCADE"), index=True)
    api_key_id: Mapped[int | None] = mapped_column(
        ForeignKey("api_keys.id", ondelete="SET NULL"), index=True
    )
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)
    filename: Mapped[str] = mapped_column(String(255))
    sha256: Mapped[str] = mapped_column(String(64), index=True)
    size_bytes: Mapped[int] = mapped_column(Integer)
    mode: Mapped[str] = mapped_column(String(16))
    """``partial`` (valid rows stored) or ``all_or_nothing``."""
    status: Mapped[str] = mapped_column(String(16))
    """``stored`` (some or all rows stored) or ``rejected`` (nothing stored)."""
    stored: Mapped[int] = mapped_column(Integer, default=0)
    replaced: Mapped[int] = mapped_column(Integer, default=0)
    unchanged: Mapped[int] = mapped_column(Integer, default=0)
    rejected: Mapped[int] = mapped_column(Integer, default=0)
    errors: Mapped[list[dict[str, Any]]] = mapped_column(JSON, default=list)
    notices: Mapped[list[dict[str, Any]]] = mapped_column(JSON, default=list)
    units_recomputed: Mapped[list[str]] = mapped_column(JSON, default=list)
    """Slugs of the units whose spans this upload marked dirty."""
