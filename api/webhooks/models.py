"""Webhook subscriptions, the outbox of events, deliveries and their attempts."""

from __future__ import annotations

import datetime as dt
import enum

from sqlalchemy import JSON, Boolean, Float, ForeignKey, Index, Integer, String, Text
from sqlalchemy.orm import Mapped, mapped_column

from api.core.db import Base, BigIntPK, UTCDateTime, utcnow


class EventType(enum.StrEnum):
    ALERT_FIRED = "alert.fired"
    ALERT_RESOLVED = "alert.resolved"
    ALERT_ACKNOWLEDGED = "alert.acknowledged"
    TEST = "webhook.test"
    """Sent by ``POST /webhooks/{id}/test`` to that subscription only."""


ALERT_EVENT_TYPES = (EventType.ALERT_FIRED, EventType.ALERT_RESOLVED, EventType.ALERT_ACKNOWLEDGED)


class DeliveryState(enum.StrEnum):
    PENDING = "pending"
    """Waiting for its first or next attempt (``next_attempt_at``)."""
    LEASED = "leased"
    """A worker is attempting it until ``lease_expires_at``; expired = pending again."""
    DELIVERED = "delivered"
    FAILED = "failed"
    """Given up: too old (``LOSTWORK_WEBHOOK_MAX_AGE_SECONDS``) or address refused."""


class WebhookSubscription(Base):
    """A receiver URL with its signing secret and the events it wants.

    Filters are lists of slugs / names; an empty or null list means "all". The secret is
    stored as given (``whsec_`` + base64): HMAC needs the key itself, so it cannot be
    hashed like an API key.
    """

    __tablename__ = "webhook_subscriptions"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    url: Mapped[str] = mapped_column(String(2000))
    description: Mapped[str | None] = mapped_column(String(500))
    secret: Mapped[str] = mapped_column(String(200))
    previous_secret: Mapped[str | None] = mapped_column(String(200))
    """The secret before the last rotation, still signing until ``previous_expires_at``."""
    previous_expires_at: Mapped[dt.datetime | None] = mapped_column(UTCDateTime())
    event_types: Mapped[list[str] | None] = mapped_column(JSON)
    plants: Mapped[list[str] | None] = mapped_column(JSON)
    units: Mapped[list[str] | None] = mapped_column(JSON)
    severities: Mapped[list[str] | None] = mapped_column(JSON)
    enabled: Mapped[bool] = mapped_column(Boolean, default=True)
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)
    updated_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)


class WebhookEvent(Base):
    """An event as sent: its id (``webhook-id``, stable across retries) and exact body.

    Written in the transaction that creates the event (an alert firing, resolving, being
    acknowledged), together with one delivery per matching subscription: the outbox.
    """

    __tablename__ = "webhook_events"

    id: Mapped[str] = mapped_column(String(40), primary_key=True)
    type: Mapped[str] = mapped_column(String(32))
    body: Mapped[str] = mapped_column(Text)
    """The JSON document, serialised once: what is signed and sent, byte for byte."""
    alert_id: Mapped[int | None] = mapped_column(
        ForeignKey("alerts.id", ondelete="SET NULL"), index=True
    )
    ordering_key: Mapped[str] = mapped_column(String(64))
    """Deliveries with the same key go out in creation order (``unit:<id>``)."""
    occurred_at: Mapped[dt.datetime] = mapped_column(UTCDateTime())
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)


class WebhookDelivery(Base):
    """One event to one subscription: the delivery worker's queue row."""

    __tablename__ = "webhook_deliveries"
    __table_args__ = (
        Index("ix_webhook_deliveries_claim", "state", "next_attempt_at"),
        Index("ix_webhook_deliveries_order", "subscription_id", "ordering_key", "id"),
    )

    id: Mapped[int] = mapped_column(BigIntPK, primary_key=True)
    event_id: Mapped[str] = mapped_column(
        ForeignKey("webhook_events.id", ondelete="CASCADE"), index=True
    )
    subscription_id: Mapped[int] = mapped_column(
        ForeignKey("webhook_subscriptions.id", ondelete="CASCADE")
    )
    ordering_key: Mapped[str] = mapped_column(String(64))
    state: Mapped[str] = mapped_column(String(16), default=DeliveryState.PENDING.value)
    attempts: Mapped[int] = mapped_column(Integer, default=0)
    next_attempt_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)
    lease_owner: Mapped[str | None] = mapped_column(String(128))
    lease_expires_at: Mapped[dt.datetime | None] = mapped_column(UTCDateTime())
    last_status: Mapped[int | None] = mapped_column(Integer)
    last_error: Mapped[str | None] = mapped_column(Text)
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)
    delivered_at: Mapped[dt.datetime | None] = mapped_column(UTCDateTime())
    updated_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)


class WebhookAttempt(Base):
    """One HTTP attempt of a delivery (or a refusal before any connection)."""

    __tablename__ = "webhook_attempts"

    id: Mapped[int] = mapped_column(BigIntPK, primary_key=True)
    delivery_id: Mapped[int] = mapped_column(
        ForeignKey("webhook_deliveries.id", ondelete="CASCADE"), index=True
    )
    number: Mapped[int] = mapped_column(Integer)
    started_at: Mapped[dt.datetime] = mapped_column(UTCDateTime())
    duration_ms: Mapped[float | None] = mapped_column(Float)
    """None for an attempt abandoned by a worker that stopped (lease expired)."""
    address: Mapped[str | None] = mapped_column(String(64))
    """The IP address connected to (after the address policy)."""
    status_code: Mapped[int | None] = mapped_column(Integer)
    error: Mapped[str | None] = mapped_column(Text)
    outcome: Mapped[str] = mapped_column(String(16))
    """``delivered``, ``retry``, ``failed`` (given up), ``refused`` (address policy),
    ``expired`` (too old before this attempt) or ``abandoned`` (worker stopped)."""
