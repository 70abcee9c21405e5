"""Webhook subscriptions: create, change, rotate the secret, test; deliveries listed."""

from __future__ import annotations

import datetime as dt
from collections import defaultdict

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from api.core.db import utcnow
from api.core.problems import InvalidInput, NotFound
from api.webhooks import signing
from api.webhooks.addresses import Resolver, check_url, system_resolver
from api.webhooks.models import (
    DeliveryState,
    EventType,
    WebhookAttempt,
    WebhookDelivery,
    WebhookEvent,
    WebhookSubscription,
)
from api.webhooks.outbox import EventScope, emit
from api.webhooks.schemas import (
    AttemptRead,
    DeliveryRead,
    SubscriptionCreate,
    SubscriptionRead,
    SubscriptionUpdate,
)


def _secret(value: str | None, field: str) -> str:
    if value is None:
        return signing.generate_secret()
    try:
        signing.secret_key(value)
    except ValueError as exc:
        raise InvalidInput(
            f"{field}: {exc}", errors=[{"field": field, "message": str(exc)}]
        ) from None
    return value


def _lists(body: SubscriptionCreate | SubscriptionUpdate) -> dict[str, list[str] | None]:
    return {
        name: (list(dict.fromkeys(getattr(body, name))) or None)
        if getattr(body, name) is not None
        else None
        for name in ("event_types", "plants", "units", "severities")
    }


def _check_filters(session: Session, body: SubscriptionCreate | SubscriptionUpdate) -> None:
    """Plant and unit slugs in filters must exist: a typo would silently match nothing."""
    from api.plants.models import Plant, Unit

    errors = []
    for field, model in (("plants", Plant), ("units", Unit)):
        wanted = getattr(body, field) or []
        known = set(session.scalars(select(model.slug).where(model.slug.in_(wanted))))
        errors += [
            {"field": f"{field}[{i}]", "message": f"no {field[:-1]} {slug!r}"}
            for i, slug in enumerate(wanted)
            if slug not in known
        ]
    if errors:
        raise InvalidInput(
            "the filters name " + "; ".join(e["message"] for e in errors), errors=errors
        )


def create_subscription(
    *,
    session: Session,
    body: SubscriptionCreate,
    allow_list: list[str],
    resolver: Resolver = system_resolver,
) -> WebhookSubscription:
    """Check the URL against the address policy (no connection is made) and store."""
    check_url(body.url, allow_list, resolver=resolver)
    _check_filters(session, body)
    subscription = WebhookSubscription(
        url=body.url,
        description=body.description,
        secret=_secret(body.secret, "secret"),
        enabled=body.enabled,
        **_lists(body),
    )
    session.add(subscription)
    session.commit()
    return subscription


def get_subscription(session: Session, subscription_id: int) -> WebhookSubscription:
    subscription = session.get(WebhookSubscription, subscription_id)
    if subscription is None:
        raise NotFound(f"no webhook subscription with id {subscription_id}")
    return subscription


def list_subscriptions(*, session: Session) -> list[WebhookSubscription]:
    return list(session.scalars(select(WebhookSubscription).order_by(WebhookSubscription.id)))


def update_subscription(
    *,
    session: Session,
    subscription_id: int,
    body: SubscriptionUpdate,
    allow_list: list[str],
    resolver: Resolver = system_resolver,
) -> WebhookSubscription:
    subscription = get_subscription(session, subscription_id)
    given = body.model_fields_set
    _check_filters(session, body)
    if "url" in given:
        if body.url is None:
            raise InvalidInput("url cannot be null", errors=[{"field": "url", "message": "null"}])
        check_url(body.url, allow_list, resolver=resolver)
        subscription.url = body.url
    if "description" in given:
        subscription.description = body.description
    if "enabled" in given and body.enabled is not None:
        subscription.enabled = body.enabled
    for name, value in _lists(body).items():
        if name in given:
            setattr(subscription, name, value)
    subscription.updated_at = utcnow()
    session.commit()
    return subscription


def delete_subscription(*, session: Session, subscription_id: int) -> None:
    """Delete a subscription with its deliveries and their attempt log."""
    session.delete(get_subscription(session, subscription_id))
    session.commit()


def rotate_secret(
    *,
    session: Session,
    subscription_id: int,
    overlap_seconds: float,
    secret: str | None = None,
    now: dt.datetime | None = None,
) -> WebhookSubscription:
    """A new secret; the old one keeps signing beside it for ``overlap_seconds`` (both
    signatures in ``webhook-signature``) so the receiver can switch without losing any."""
    subscription = get_subscription(session, subscription_id)
    now = now or utcnow()
    new = _secret(secret, "secret")
    if new == subscription.secret:
        raise InvalidInput(
            "the new secret is the current one",
            errors=[{"field": "secret", "message": "give a different secret"}],
        )
    if overlap_seconds > 0:
        subscription.previous_secret = subscription.secret
        subscription.previous_expires_at = now + dt.timedelta(seconds=overlap_seconds)
    else:
        subscription.previous_secret = subscription.previous_expires_at = None
    subscription.secret = new
    subscription.updated_at = now
    session.commit()
    return subscription


def send_test(*, session: Session, subscription_id: int) -> tuple[str, int]:
    """Queue a ``webhook.test`` event to this subscription alone, whatever its filters
    (like every delivery, it waits while the subscription is disabled)."""
    subscription = get_subscription(session, subscription_id)
    now = utcnow()

    def build(event_id: str) -> dict:
        return {
            "type": EventType.TEST.value,
            "id": event_id,
            "occurred_at": now.isoformat().replace("+00:00", "Z"),
            "subscription": {"id": subscription.id},
            "message": "A test event from lostwork: the subscription and its secret work.",
        }

    event = emit(
        session,
        scope=EventScope(event_type=EventType.TEST.value),
        build=build,
        ordering_key=f"test:{subscription.id}",
        occurred_at=now,
        only_subscription=subscription.id,
    )
    delivery_id = session.scalar(
        select(WebhookDelivery.id).where(WebhookDelivery.event_id == event.id)
    )
    session.commit()
    assert delivery_id is not None
    return event.id, int(delivery_id)


def counts(session: Session, subscription_ids: list[int]) -> dict[int, dict[str, int]]:
    rows = session.execute(
        select(WebhookDelivery.subscription_id, WebhookDelivery.state, func.count())
        .where(WebhookDelivery.subscription_id.in_(subscription_ids))
        .group_by(WebhookDelivery.subscription_id, WebhookDelivery.state)
    ).all()
    out: dict[int, dict[str, int]] = defaultdict(dict)
    for sid, state, n in rows:
        out[sid][state] = int(n)
    return out


def subscription_read(
    subscription: WebhookSubscription, tally: dict[str, int] | None = None
) -> SubscriptionRead:
    tally = tally or {}
    now = utcnow()
    previous = subscription.previous_expires_at
    return SubscriptionRead(
        id=subscription.id,
        url=subscription.url,
        description=subscription.description,
        event_types=subscription.event_types,
        plants=subscription.plants,
        units=subscription.units,
        severities=subscription.severities,
        enabled=subscription.enabled,
        previous_secret_expires_at=previous if previous and previous > now else None,
        created_at=subscription.created_at,
        updated_at=subscription.updated_at,
        pending=tally.get(DeliveryState.PENDING.value, 0)
        + tally.get(DeliveryState.LEASED.value, 0),
        failed=tally.get(DeliveryState.FAILED.value, 0),
    )


def list_deliveries(
    *,
    session: Session,
    subscription_id: int,
    state: str | None = None,
    limit: int = 100,
    offset: int = 0,
) -> tuple[list[DeliveryRead], int]:
    """Deliveries newest first, each with its attempts."""
    get_subscription(session, subscription_id)
    query = (
        select(WebhookDelivery, WebhookEvent.type)
        .join(WebhookEvent, WebhookEvent.id == WebhookDelivery.event_id)
        .where(WebhookDelivery.subscription_id == subscription_id)
    )
    if state is not None:
        query = query.where(WebhookDelivery.state == state)
    total = session.scalar(select(func.count()).select_from(query.subquery())) or 0
    rows = session.execute(
        query.order_by(WebhookDelivery.id.desc()).limit(limit).offset(offset)
    ).all()
    ids = [d.id for d, _ in rows]
    attempts: dict[int, list[AttemptRead]] = defaultdict(list)
    if ids:
        for a in session.scalars(
            select(WebhookAttempt)
            .where(WebhookAttempt.delivery_id.in_(ids))
            .order_by(WebhookAttempt.delivery_id, WebhookAttempt.number, WebhookAttempt.id)
        ):
            attempts[a.delivery_id].append(
                AttemptRead(
                    number=a.number,
                    started_at=a.started_at,
                    duration_ms=a.duration_ms,
                    address=a.address,
                    status_code=a.status_code,
                    error=a.error,
                    outcome=a.outcome,
                )
            )
    out = [
        DeliveryRead(
            id=d.id,
            event_id=d.event_id,
            event_type=event_type,
            state=d.state,  # type: ignore[arg-type]
            attempts=d.attempts,
            next_attempt_at=d.next_attempt_at if d.state == DeliveryState.PENDING.value else None,
            created_at=d.created_at,
            delivered_at=d.delivered_at,
            last_status=d.last_status,
            last_error=d.last_error,
            attempt_log=attempts.get(d.id, []),
        )
        for d, event_type in rows
    ]
    return out, int(total)
