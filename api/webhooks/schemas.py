"""Webhook subscription and delivery payloads of the API."""

from __future__ import annotations

import datetime as dt
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field

AlertEventName = Literal["alert.fired", "alert.resolved", "alert.acknowledged"]
SeverityName = Literal["info", "warning", "critical"]
MAX_OVERLAP_SECONDS = 30 * 86_400


class SubscriptionBase(BaseModel):
    model_config = ConfigDict(extra="forbid")

    description: str | None = Field(default=None, max_length=500)
    event_types: list[AlertEventName] | None = None
    """Events wanted; null or empty = all three."""
    plants: list[str] | None = None
    """Plant slugs; null or empty = every plant."""
    units: list[str] | None = None
    """Unit slugs; null or empty = every unit."""
    severities: list[SeverityName] | None = None
    """Severities wanted; null or empty = all."""


class SubscriptionCreate(SubscriptionBase):
    url: str = Field(max_length=2000, examples=["https://hooks.example.org/lostwork"])
    secret: str | None = Field(default=None, max_length=200)
    """``whsec_`` + base64 of 24 to 64 random bytes; generated when omitted."""
    enabled: bool = True


class SubscriptionUpdate(SubscriptionBase):
    """Fields to change; the filters given replace the old ones (null clears)."""

    url: str | None = Field(default=None, max_length=2000)
    enabled: bool | None = None


class SubscriptionRead(BaseModel):
    id: int
    url: str
    description: str | None
    event_types: list[str] | None
    plants: list[str] | None
    units: list[str] | None
    severities: list[str] | None
    enabled: bool
    previous_secret_expires_at: dt.datetime | None
    """While in the future, deliveries carry a signature with the previous secret too."""
    created_at: dt.datetime
    updated_at: dt.datetime
    pending: int
    """Deliveries waiting (pending or being attempted)."""
    failed: int
    """Deliveries given up."""


class SubscriptionCreated(SubscriptionRead):
    secret: str
    """Shown here and on rotation only; give it to the receiver."""


class SubscriptionList(BaseModel):
    webhooks: list[SubscriptionRead]


class RotateSecret(BaseModel):
    model_config = ConfigDict(extra="forbid")

    overlap_seconds: float = Field(default=86_400.0, ge=0, le=MAX_OVERLAP_SECONDS)
    """How long the old secret keeps signing beside the new one."""
    secret: str | None = Field(default=None, max_length=200)
    """The new secret; generated when omitted."""


class SecretRotated(BaseModel):
    id: int
    secret: str
    previous_secret_expires_at: dt.datetime | None


class TestQueued(BaseModel):
    event_id: str
    """The ``webhook-id`` the test request will carry."""
    delivery_id: int


class AttemptRead(BaseModel):
    number: int
    started_at: dt.datetime
    duration_ms: float | None
    address: str | None
    status_code: int | None
    error: str | None
    outcome: str


class DeliveryRead(BaseModel):
    id: int
    event_id: str
    event_type: str
    state: Literal["pending", "leased", "delivered", "failed"]
    attempts: int
    next_attempt_at: dt.datetime | None
    created_at: dt.datetime
    delivered_at: dt.datetime | None
    last_status: int | None
    last_error: str | None
    attempt_log: list[AttemptRead]


class DeliveryList(BaseModel):
    deliveries: list[DeliveryRead]
    total: int
