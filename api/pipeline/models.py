"""The durable work queue: spans of a unit's time axis whose results are out of date."""

from __future__ import annotations

import datetime as dt
import enum

from sqlalchemy import BigInteger, ForeignKey, Index, Integer, String, Text
from sqlalchemy.orm import Mapped, mapped_column

from api.core.db import Base, BigIntPK, UTCDateTime, utcnow


class SpanState(enum.StrEnum):
    PENDING = "pending"
    """Waiting to be claimed (also a span whose lease expired: see ``lease_expires_at``)."""
    LEASED = "leased"
    """Claimed by ``lease_owner`` until ``lease_expires_at``."""
    DONE = "done"
    FAILED = "failed"
    """Gave up after too many attempts; ``last_error`` says why."""


class WorkSpan(Base):
    """Results of ``unit_id`` over [start_ms, end_ms) must be (re)computed.

    Claiming: on PostgreSQL ``SELECT ... FOR UPDATE SKIP LOCKED`` over pending spans and
    leased spans whose lease expired, then set owner, expiry and attempts in the same
    transaction; on SQLite one ``UPDATE ... WHERE id = (SELECT ...) RETURNING`` statement
    (SQLite has one writer at a time, so the statement itself is the lock). A worker that
    dies leaves its lease to expire, and the span is claimed again: nothing is lost.
    """

    __tablename__ = "work_spans"
    __table_args__ = (Index("ix_work_spans_claim", "state", "lease_expires_at"),)

    id: Mapped[int] = mapped_column(BigIntPK, primary_key=True)
    unit_id: Mapped[int] = mapped_column(ForeignKey("units.id", ondelete="CASCADE"), index=True)
    start_ms: Mapped[int] = mapped_column(BigInteger)
    """Inclusive start, UTC epoch ms, aligned to the plant interval."""
    end_ms: Mapped[int] = mapped_column(BigInteger)
    """Exclusive end, UTC epoch ms, aligned to the plant interval."""
    state: Mapped[str] = mapped_column(String(16), default=SpanState.PENDING.value)
    reason: Mapped[str] = mapped_column(String(32))
    """What made it dirty: ``ingest``, ``upload``, ``config``, ``recompute``."""
    lease_owner: Mapped[str | None] = mapped_column(String(128))
    lease_expires_at: Mapped[dt.datetime | None] = mapped_column(UTCDateTime())
    attempts: Mapped[int] = mapped_column(Integer, default=0)
    last_error: Mapped[str | None] = mapped_column(Text)
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)
    updated_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)
