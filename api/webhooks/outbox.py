"""The outbox: events written in the transaction that creates them, one delivery per
matching subscription.

Callers (the alert lifecycle) pass the open session; nothing here commits. When the
caller's transaction commits, the event and its deliveries exist; when it rolls back,
neither does — so an alert never fires without its webhook queued, nor the reverse.
"""

from __future__ import annotations

import datetime as dt
import json
import uuid
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from sqlalchemy import insert, select
from sqlalchemy.orm import Session

from api.core.db import utcnow
from api.webhooks.models import DeliveryState, WebhookDelivery, WebhookEvent, WebhookSubscription

EVENT_ID_PREFIX = "evt_"


def new_event_id() -> str:
    """``evt_`` + 32 hex digits: no ``.``, as the signature scheme asks of ``webhook-id``."""
    return EVENT_ID_PREFIX + uuid.uuid4().hex


@dataclass(frozen=True)
class EventScope:
    """What subscription filters are matched against."""

    event_type: str
    plant: str | None = None
    unit: str | None = None
    severity: str | None = None


def matches(subscription: WebhookSubscription, scope: EventScope) -> bool:
    """Whether ``subscription`` wants an event of ``scope`` (an empty filter wants all)."""
    for wanted, value in (
        (subscription.event_types, scope.event_type),
        (subscription.plants, scope.plant),
        (subscription.units, scope.unit),
        (subscription.severities, scope.severity),
    ):
        if wanted and value not in wanted:
            return False
    return True


def serialise(body: dict[str, Any]) -> str:
    """The one serialisation of a payload: compact JSON, UTF-8 text, keys in given order."""
    return json.dumps(body, separators=(",", ":"), ensure_ascii=False, allow_nan=False)


def emit(
    session: Session,
    *,
    scope: EventScope,
    build: Callable[[str], dict[str, Any]],
    ordering_key: str,
    occurred_at: dt.datetime,
    alert_id: int | None = None,
    only_subscription: int | None = None,
) -> WebhookEvent:
    """Write an event and its deliveries in the caller's transaction.

    ``build(event_id)`` returns the payload (it carries its own id). A disabled
    subscription gets no delivery. ``only_subscription`` sends to that subscription
    alone, whatever its filters and enabled flag (test events).
    """
    event_id = new_event_id()
    now = utcnow()
    event = WebhookEvent(
        id=event_id,
        type=scope.event_type,
        body=serialise(build(event_id)),
        alert_id=alert_id,
        ordering_key=ordering_key,
        occurred_at=occurred_at,
        created_at=now,
    )
    session.add(event)
    session.flush()
    query = select(WebhookSubscription)
    if only_subscription is not None:
        query = query.where(WebhookSubscription.id == only_subscription)
    else:
        query = query.where(WebhookSubscription.enabled.is_(True))
    targets = [
        s.id
        for s in session.scalars(query.order_by(WebhookSubscription.id))
        if only_subscription is not None or matches(s, scope)
    ]
    if targets:
        session.execute(
            insert(WebhookDelivery),
            [
                {
                    "event_id": event_id,
                    "subscription_id": sid,
                    "ordering_key": ordering_key,
                    "state": DeliveryState.PENDING.value,
                    "attempts": 0,
                    "next_attempt_at": now,
                    "created_at": now,
                    "updated_at": now,
                }
                for sid in targets
            ],
        )
    return event
