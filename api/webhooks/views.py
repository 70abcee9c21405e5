"""Webhook subscription routes (admin: URLs and secrets are the operator's business)."""

from __future__ import annotations

from typing import Annotated, Literal

from fastapi import APIRouter, Query, Request, Response

from api.deps import AdminKey, SessionDep, SettingsDep
from api.webhooks import service
from api.webhooks.addresses import Resolver, system_resolver
from api.webhooks.schemas import (
    DeliveryList,
    RotateSecret,
    SecretRotated,
    SubscriptionCreate,
    SubscriptionCreated,
    SubscriptionList,
    SubscriptionRead,
    SubscriptionUpdate,
    TestQueued,
)

router = APIRouter(prefix="/webhooks", tags=["webhooks"])


def _resolver(request: Request) -> Resolver:
    # Tests may put a resolver of their own on the app; production resolves for real.
    return getattr(request.app.state, "webhook_resolver", system_resolver)


def _read(session, subscription) -> SubscriptionRead:  # type: ignore[no-untyped-def]
    tally = service.counts(session, [subscription.id]).get(subscription.id)
    return service.subscription_read(subscription, tally)


@router.post("", status_code=201, response_model=SubscriptionCreated, operation_id="create_webhook")
def create_webhook(
    body: SubscriptionCreate,
    request: Request,
    session: SessionDep,
    settings: SettingsDep,
    _key: AdminKey,
) -> SubscriptionCreated:
    """Subscribe a URL. The URL's host is resolved and every address checked: loopback,
    private, link-local and other internal destinations are refused (422 naming the
    address) unless ``LOSTWORK_WEBHOOK_ALLOW_LIST`` names them. The response carries the
    signing secret (``whsec_...``) once."""
    subscription = service.create_subscription(
        session=session,
        body=body,
        allow_list=settings.webhook_allow_list,
        resolver=_resolver(request),
    )
    return SubscriptionCreated(
        **_read(session, subscription).model_dump(), secret=subscription.secret
    )


@router.get("", response_model=SubscriptionList, operation_id="list_webhooks")
def list_webhooks(session: SessionDep, _key: AdminKey) -> SubscriptionList:
    subscriptions = service.list_subscriptions(session=session)
    tallies = service.counts(session, [s.id for s in subscriptions])
    return SubscriptionList(
        webhooks=[service.subscription_read(s, tallies.get(s.id)) for s in subscriptions]
    )


@router.get("/{webhook_id}", response_model=SubscriptionRead, operation_id="get_webhook")
def get_webhook(webhook_id: int, session: SessionDep, _key: AdminKey) -> SubscriptionRead:
    return _read(session, service.get_subscription(session, webhook_id))


@router.patch("/{webhook_id}", response_model=SubscriptionRead, operation_id="update_webhook")
def update_webhook(
    webhook_id: int,
    body: SubscriptionUpdate,
    request: Request,
    session: SessionDep,
    settings: SettingsDep,
    _key: AdminKey,
) -> SubscriptionRead:
    """Change the URL (checked again), filters, description or enabled flag."""
    subscription = service.update_subscription(
        session=session,
        subscription_id=webhook_id,
        body=body,
        allow_list=settings.webhook_allow_list,
        resolver=_resolver(request),
    )
    return _read(session, subscription)


@router.delete("/{webhook_id}", status_code=204, operation_id="delete_webhook")
def delete_webhook(webhook_id: int, session: SessionDep, _key: AdminKey) -> Response:
    """Delete the subscription, its queued deliveries and their log."""
    service.delete_subscription(session=session, subscription_id=webhook_id)
    return Response(status_code=204)


@router.post(
    "/{webhook_id}/rotate-secret",
    response_model=SecretRotated,
    operation_id="rotate_webhook_secret",
)
def rotate_secret(
    webhook_id: int, body: RotateSecret, session: SessionDep, _key: AdminKey
) -> SecretRotated:
    """A new secret. For ``overlap_seconds`` (default a day) every request carries two
    signatures in ``webhook-signature``, one per secret, so the receiver can switch
    secrets at any moment of the overlap without rejecting a request."""
    subscription = service.rotate_secret(
        session=session,
        subscription_id=webhook_id,
        overlap_seconds=body.overlap_seconds,
        secret=body.secret,
    )
    return SecretRotated(
        id=subscription.id,
        secret=subscription.secret,
        previous_secret_expires_at=subscription.previous_expires_at,
    )


@router.post(
    "/{webhook_id}/test", status_code=202, response_model=TestQueued, operation_id="test_webhook"
)
def test_webhook(webhook_id: int, session: SessionDep, _key: AdminKey) -> TestQueued:
    """Queue a signed ``webhook.test`` event to this subscription; follow it with
    ``GET /webhooks/{id}/deliveries``."""
    event_id, delivery_id = service.send_test(session=session, subscription_id=webhook_id)
    return TestQueued(event_id=event_id, delivery_id=delivery_id)


@router.get(
    "/{webhook_id}/deliveries", response_model=DeliveryList, operation_id="list_webhook_deliveries"
)
def list_deliveries(
    webhook_id: int,
    session: SessionDep,
    _key: AdminKey,
    state: Literal["pending", "leased", "delivered", "failed"] | None = None,
    limit: Annotated[int, Query(ge=1, le=1000)] = 100,
    offset: Annotated[int, Query(ge=0)] = 0,
) -> DeliveryList:
    """Deliveries newest first, each with every attempt: status code, error, duration,
    address connected to, outcome."""
    deliveries, total = service.list_deliveries(
        session=session, subscription_id=webhook_id, state=state, limit=limit, offset=offset
    )
    return DeliveryList(deliveries=deliveries, total=total)
