"""Results in long format: one row per unit, metric and interval."""

from __future__ import annotations

import datetime as dt

from sqlalchemy import BigInteger, Float, ForeignKey, Integer, String
from sqlalchemy.orm import Mapped, mapped_column

from api.core.db import Base, UTCDateTime, utcnow


class ResultValue(Base):
    """One computed value in SI (``"1"`` for fractions); the flags bits are the metric
    ``flags`` stored as a float holding an exact integer."""

    __tablename__ = "results"

    unit_id: Mapped[int] = mapped_column(Integer, primary_key=True)
    """No foreign key, like ``readings``: bulk writes skip the per-row check; deleting a
    unit deletes its results in the service."""
    metric: Mapped[str] = mapped_column(String(64), primary_key=True)
    t_ms: Mapped[int] = mapped_column(BigInteger, primary_key=True)
    """Interval start, UTC epoch milliseconds."""
    value: Mapped[float | None] = mapped_column(Float)
    """None where the model gave NaN."""


class ResultMeta(Base):
    """What produced a unit's stored results."""

    __tablename__ = "result_meta"

    unit_id: Mapped[int] = mapped_column(
        ForeignKey("units.id", ondelete="CASCADE"), primary_key=True
    )
    kind: Mapped[str] = mapped_column(String(64))
    formulation: Mapped[str] = mapped_column(String(64))
    """Water/steam formulation, e.g. ``IAPWS-IF97``."""
    engine_version: Mapped[str] = mapped_column(String(32))
    computed_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)
