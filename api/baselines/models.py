"""Baseline versions, the control charts' carried state, and CUSUM alarm events."""

from __future__ import annotations

import datetime as dt
from typing import Any

from sqlalchemy import (
    JSON,
    BigInteger,
    Boolean,
    Float,
    ForeignKey,
    Index,
    Integer,
    String,
    UniqueConstraint,
    text,
)
from sqlalchemy.orm import Mapped, mapped_column

from api.core.db import Base, BigIntPK, UTCDateTime, utcnow


class Baseline(Base):
    """One fitted version of a unit's baseline of one metric (immutable once fitted,
    except for its activation).

    ``version`` counts per unit across metrics (``/units/{unit}/baselines/{version}``).
    At most one version per (unit, metric) is active: a partial unique index says so to
    the database.
    """

    __tablename__ = "baselines"
    __table_args__ = (
        UniqueConstraint("unit_id", "version"),
        Index(
            "uq_baselines_one_active",
            "unit_id",
            "metric",
            unique=True,
            sqlite_where=text("active"),
            postgresql_where=text("active"),
        ),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    unit_id: Mapped[int] = mapped_column(ForeignKey("units.id", ondelete="CASCADE"), index=True)
    version: Mapped[int] = mapped_column(Integer)
    metric: Mapped[str] = mapped_column(String(64))
    load: Mapped[str] = mapped_column(String(64))
    """Load regressor (a result column of the unit)."""
    regressors: Mapped[list[str]] = mapped_column(JSON)
    """Every regressor, load first, as the model stores them."""
    start_ms: Mapped[int] = mapped_column(BigInteger)
    """Reference period start (inclusive), UTC epoch ms."""
    end_ms: Mapped[int] = mapped_column(BigInteger)
    """Reference period end (exclusive), UTC epoch ms."""
    model: Mapped[dict[str, Any]] = mapped_column(JSON)
    """``engine.baseline.Baseline.to_dict()``: form, coefficients, ranges, statistics."""
    best: Mapped[dict[str, Any] | None] = mapped_column(JSON)
    """``engine.headroom.DemonstratedBest.to_dict()`` over the reference period, or None
    (the kind has no eta_2, or too few steady intervals)."""
    settings: Mapped[dict[str, Any]] = mapped_column(JSON)
    """How it was fitted and how its charts run: steady limits used, counts, chart k, h,
    EWMA lambda and L."""
    note: Mapped[str | None] = mapped_column(String(500))
    active: Mapped[bool] = mapped_column(Boolean, default=False)
    chart_origin_ms: Mapped[int | None] = mapped_column(BigInteger)
    """Where its control charts start (set on activation), UTC epoch ms."""
    created_by: Mapped[str | None] = mapped_column(String(200))
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)
    activated_by: Mapped[str | None] = mapped_column(String(200))
    activated_at: Mapped[dt.datetime | None] = mapped_column(UTCDateTime())


class ChartCheckpoint(Base):
    """The EWMA and CUSUM state of (unit, metric) after every interval before ``t_ms``.

    Written at the end of each computed chunk; the next chunk starting at or after it
    continues from the latest checkpoint at or before its start (replaying the stored
    drift in between). At most one per UTC day is kept besides the chart's origin.
    """

    __tablename__ = "baseline_chart_checkpoints"

    unit_id: Mapped[int] = mapped_column(Integer, primary_key=True)
    metric: Mapped[str] = mapped_column(String(64), primary_key=True)
    t_ms: Mapped[int] = mapped_column(BigInteger, primary_key=True)
    baseline_id: Mapped[int] = mapped_column(
        ForeignKey("baselines.id", ondelete="CASCADE"), index=True
    )
    ewma: Mapped[float] = mapped_column(Float)
    ewma_count: Mapped[int] = mapped_column(Integer)
    cusum_upper: Mapped[float] = mapped_column(Float)
    cusum_lower: Mapped[float] = mapped_column(Float)
    upper_run: Mapped[int] = mapped_column(Integer)
    lower_run: Mapped[int] = mapped_column(Integer)
    upper_since_ms: Mapped[int | None] = mapped_column(BigInteger)
    lower_since_ms: Mapped[int | None] = mapped_column(BigInteger)


class DriftEvent(Base):
    """One CUSUM alarm: when, which side, where the shift began and its estimated size."""

    __tablename__ = "drift_events"
    __table_args__ = (Index("ix_drift_events_unit_metric_alarm", "unit_id", "metric", "alarm_ms"),)

    id: Mapped[int] = mapped_column(BigIntPK, primary_key=True)
    baseline_id: Mapped[int] = mapped_column(
        ForeignKey("baselines.id", ondelete="CASCADE"), index=True
    )
    unit_id: Mapped[int] = mapped_column(Integer)
    metric: Mapped[str] = mapped_column(String(64))
    alarm_ms: Mapped[int] = mapped_column(BigInteger)
    side: Mapped[str] = mapped_column(String(8))
    shift_start_ms: Mapped[int | None] = mapped_column(BigInteger)
    run_length: Mapped[int] = mapped_column(Integer)
    statistic: Mapped[float] = mapped_column(Float)
    """C+ or C- at the alarm. [residual standard deviations]"""
    estimated_shift: Mapped[float] = mapped_column(Float)
    """Signed shift estimate, Montgomery Eq. 9.4. [residual standard deviations]"""
