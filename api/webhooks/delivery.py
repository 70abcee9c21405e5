"""Delivering one outbox row: claim, sign and post, record the attempt.

Claiming: a delivery is due when it is ``pending`` with ``next_attempt_at`` passed, or
``leased`` with an expired lease (its worker died mid-attempt), and no earlier delivery
of the same subscription and ordering key (``unit:<id>``) is still pending or leased —
so the events of one unit reach a receiver in the order they were created, each after
the one before it was delivered or given up. On PostgreSQL the candidate row is locked
``FOR UPDATE SKIP LOCKED`` (several workers never wait on each other); on SQLite the
claim runs under ``BEGIN IMMEDIATE``. The lease is committed before any HTTP traffic;
no database connection is held while posting.

Posting: the URL's host is resolved and checked against the address policy
(:mod:`api.webhooks.addresses`), then the checked address itself is connected to. The
body is the event's stored text, byte for byte; the headers are signed anew for every
attempt (a fresh ``webhook-timestamp``; the same ``webhook-id``). Redirects are not
followed (a redirect could lead to an internal address; the specification counts 3xx as
failure). ``2xx`` = delivered; ``410 Gone`` = failed and the subscription disabled (the
receiver asked to stop); anything else, timeouts and connection errors = retry after an
exponential back-off with jitter (``Retry-After`` honoured, capped), until the event is
older than the maximum age, then failed. A refused address fails at once.

Every attempt is a row of ``webhook_attempts``; an attempt whose worker was killed is
recorded as ``abandoned`` by the worker that takes the delivery over.
"""

from __future__ import annotations

import datetime as dt
import logging
import random
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from email.utils import parsedate_to_datetime
from typing import Any

import httpx
from sqlalchemy import and_, exists, or_, select, update
from sqlalchemy.orm import Session, aliased

from api.core.db import lock_for_write, utcnow
from api.webhooks import signing
from api.webhooks.addresses import AddressRefused, Resolver, UnreachableHost, check_url
from api.webhooks.addresses import system_resolver as _system_resolver
from api.webhooks.models import (
    DeliveryState,
    WebhookAttempt,
    WebhookDelivery,
    WebhookEvent,
    WebhookSubscription,
)

log = logging.getLogger("lostwork.webhooks")

USER_AGENT = "lostwork-webhooks/1"
RESPONSE_SNIPPET_BYTES = 2048
"""How much of a failed response's body is kept in the attempt log."""
LEASE_MARGIN_SECONDS = 30.0

Clock = Callable[[], dt.datetime]


@dataclass
class DeliveryOptions:
    """How a delivery worker posts and retries; :meth:`from_settings` for production."""

    timeout_s: float = 15.0
    max_age_s: float = 86_400.0
    backoff_s: float = 5.0
    backoff_max_s: float = 3_600.0
    allow_list: tuple[str, ...] = ()
    resolver: Resolver = _system_resolver
    clock: Clock = utcnow
    rng: random.Random = field(default_factory=random.Random)

    @classmethod
    def from_settings(cls, settings: Any, **overrides: Any) -> DeliveryOptions:
        values: dict[str, Any] = {
            "timeout_s": settings.webhook_timeout_seconds,
            "max_age_s": settings.webhook_max_age_seconds,
            "backoff_s": settings.webhook_backoff_seconds,
            "backoff_max_s": settings.webhook_backoff_max_seconds,
            "allow_list": tuple(settings.webhook_allow_list),
        }
        values.update(overrides)
        return cls(**values)

    @property
    def lease_s(self) -> float:
        # connect, write and read each get the timeout: the lease outlasts all three.
        return 3 * self.timeout_s + LEASE_MARGIN_SECONDS


def backoff_delay(attempt: int, options: DeliveryOptions) -> float:
    """Delay after the ``attempt``-th failure: base * 2**(attempt-1), capped, then "equal
    jitter" (half fixed, half uniform random) so retries of many events spread out. [s]"""
    ceiling = min(options.backoff_max_s, options.backoff_s * 2 ** max(attempt - 1, 0))
    return ceiling / 2 + options.rng.uniform(0, ceiling / 2)


@dataclass(frozen=True)
class Claimed:
    delivery_id: int
    event_id: str
    event_type: str
    body: str
    event_created_at: dt.datetime
    subscription_id: int
    url: str
    secrets: tuple[str, ...]
    attempt: int
    """Number of the attempt about to be made (1 = first)."""
    owner: str


def _due(now: dt.datetime):  # type: ignore[no-untyped-def]
    return or_(
        and_(
            WebhookDelivery.state == DeliveryState.PENDING.value,
            WebhookDelivery.next_attempt_at <= now,
        ),
        and_(
            WebhookDelivery.state == DeliveryState.LEASED.value,
            WebhookDelivery.lease_expires_at <= now,
        ),
    )


def _blocked():  # type: ignore[no-untyped-def]
    earlier = aliased(WebhookDelivery)
    return exists().where(
        earlier.subscription_id == WebhookDelivery.subscription_id,
        earlier.ordering_key == WebhookDelivery.ordering_key,
        earlier.id < WebhookDelivery.id,
        earlier.state.in_([DeliveryState.PENDING.value, DeliveryState.LEASED.value]),
    )


def has_due(session: Session, *, now: dt.datetime) -> bool:
    """Whether any delivery is due now (a cheap read without locks)."""
    return bool(session.scalar(select(exists().where(_due(now)))))


def claim_next(session: Session, owner: str, options: DeliveryOptions) -> Claimed | None:
    """Lease the next due delivery to ``owner`` and commit; None when nothing is due."""
    now = options.clock()
    postgres = session.get_bind().dialect.name == "postgresql"
    if not postgres:
        lock_for_write(session)
    query = (
        select(WebhookDelivery)
        .join(WebhookSubscription, WebhookSubscription.id == WebhookDelivery.subscription_id)
        .where(WebhookSubscription.enabled.is_(True), _due(now), ~_blocked())
        .order_by(WebhookDelivery.id)
        .limit(1)
    )
    if postgres:
        query = query.with_for_update(skip_locked=True, of=WebhookDelivery)
    delivery = session.scalars(query).one_or_none()
    if delivery is None:
        session.commit()
        return None
    if delivery.state == DeliveryState.LEASED.value:
        # Its worker stopped mid-attempt: the attempt it could not log is logged here.
        delivery.attempts += 1
        session.add(
            WebhookAttempt(
                delivery_id=delivery.id,
                number=delivery.attempts,
                started_at=delivery.updated_at,
                duration_ms=None,
                outcome="abandoned",
                error=f"worker {delivery.lease_owner} stopped during the attempt; lease expired",
            )
        )
    subscription = session.get(WebhookSubscription, delivery.subscription_id)
    event = session.get(WebhookEvent, delivery.event_id)
    assert subscription is not None and event is not None
    live = [subscription.secret]
    if (
        subscription.previous_secret
        and subscription.previous_expires_at
        and subscription.previous_expires_at > now
    ):
        live.append(subscription.previous_secret)
    delivery.state = DeliveryState.LEASED.value
    delivery.lease_owner = owner
    delivery.lease_expires_at = now + dt.timedelta(seconds=options.lease_s)
    delivery.updated_at = now
    claimed = Claimed(
        delivery_id=delivery.id,
        event_id=event.id,
        event_type=event.type,
        body=event.body,
        event_created_at=event.created_at,
        subscription_id=subscription.id,
        url=subscription.url,
        secrets=tuple(live),
        attempt=delivery.attempts + 1,
        owner=owner,
    )
    session.commit()
    return claimed


@dataclass
class AttemptResult:
    started_at: dt.datetime
    duration_ms: float | None = None
    address: str | None = None
    status_code: int | None = None
    error: str | None = None
    refused: bool = False
    expired: bool = False
    retry_after_s: float | None = None

    @property
    def ok(self) -> bool:
        return self.status_code is not None and 200 <= self.status_code < 300


def _retry_after(value: str | None, now: dt.datetime) -> float | None:
    if not value:
        return None
    try:
        return max(0.0, float(value))
    except ValueError:
        pass
    try:
        return max(0.0, (parsedate_to_datetime(value) - now).total_seconds())
    except (TypeError, ValueError):
        return None


def new_client(options: DeliveryOptions) -> httpx.Client:
    """The HTTP client of a delivery worker: no redirects, no proxies from the
    environment (a proxy would connect to a name the policy did not check)."""
    return httpx.Client(
        timeout=httpx.Timeout(options.timeout_s),
        follow_redirects=False,
        trust_env=False,
        headers={"user-agent": USER_AGENT},
    )


def attempt(claimed: Claimed, client: httpx.Client, options: DeliveryOptions) -> AttemptResult:
    """Make one attempt (no database access)."""
    started = options.clock()
    if (started - claimed.event_created_at).total_seconds() > options.max_age_s:
        return AttemptResult(
            started_at=started,
            expired=True,
            error=f"the event is older than the maximum age of {options.max_age_s:g} s",
        )
    try:
        target = check_url(claimed.url, options.allow_list, resolver=options.resolver)
    except AddressRefused as exc:
        return AttemptResult(
            started_at=started, refused=True, error=exc.detail, address=exc.extensions["address"]
        )
    except UnreachableHost as exc:
        return AttemptResult(started_at=started, error=exc.detail)
    body = claimed.body.encode("utf-8")
    headers = {
        "content-type": "application/json",
        "host": target.host_header,
        **signing.headers(claimed.secrets, claimed.event_id, int(started.timestamp()), body),
    }
    extensions = {"sni_hostname": target.host} if target.scheme == "https" else {}
    t0 = time.perf_counter()
    result = AttemptResult(started_at=started, address=target.address)
    try:
        with client.stream(
            "POST", target.url, content=body, headers=headers, extensions=extensions
        ) as response:
            result.status_code = response.status_code
            if not 200 <= response.status_code < 300:
                snippet = b""
                for chunk in response.iter_bytes():
                    snippet += chunk
                    if len(snippet) >= RESPONSE_SNIPPET_BYTES:
                        break
                text = snippet[:RESPONSE_SNIPPET_BYTES].decode("utf-8", "replace").strip()
                result.error = f"HTTP {response.status_code}" + (f": {text}" if text else "")
                result.retry_after_s = _retry_after(
                    response.headers.get("retry-after"), options.clock()
                )
    except httpx.TimeoutException as exc:
        result.error = f"timed out ({type(exc).__name__}, limit {options.timeout_s:g} s)"
    except httpx.HTTPError as exc:
        result.error = f"{type(exc).__name__}: {exc}"
    result.duration_ms = (time.perf_counter() - t0) * 1000.0
    return result


def record(
    session: Session, claimed: Claimed, result: AttemptResult, options: DeliveryOptions
) -> str:
    """Log the attempt and move the delivery on; commits. Returns the attempt's outcome."""
    if session.get_bind().dialect.name != "postgresql":
        lock_for_write(session)
    now = options.clock()
    values: dict[str, Any] = {
        "attempts": claimed.attempt,
        "last_status": result.status_code,
        "last_error": result.error,
        "lease_owner": None,
        "lease_expires_at": None,
        "updated_at": now,
    }
    disable = False
    if result.ok:
        outcome = "delivered"
        values.update(state=DeliveryState.DELIVERED.value, delivered_at=now)
    elif result.refused:
        outcome = "refused"
        values.update(state=DeliveryState.FAILED.value)
    elif result.expired:
        outcome = "expired"
        values.update(state=DeliveryState.FAILED.value)
    elif result.status_code == 410:
        outcome, disable = "failed", True
        values.update(state=DeliveryState.FAILED.value)
    elif (now - claimed.event_created_at).total_seconds() >= options.max_age_s:
        outcome = "failed"
        values.update(state=DeliveryState.FAILED.value)
    else:
        outcome = "retry"
        delay = backoff_delay(claimed.attempt, options)
        if result.retry_after_s is not None:
            delay = max(delay, min(result.retry_after_s, options.backoff_max_s))
        values.update(
            state=DeliveryState.PENDING.value, next_attempt_at=now + dt.timedelta(seconds=delay)
        )
    session.add(
        WebhookAttempt(
            delivery_id=claimed.delivery_id,
            number=claimed.attempt,
            started_at=result.started_at,
            duration_ms=result.duration_ms,
            address=result.address,
            status_code=result.status_code,
            error=result.error,
            outcome=outcome,
        )
    )
    moved = session.execute(
        update(WebhookDelivery)
        .where(
            WebhookDelivery.id == claimed.delivery_id,
            WebhookDelivery.lease_owner == claimed.owner,
            WebhookDelivery.state == DeliveryState.LEASED.value,
        )
        .values(**values)
    )
    if moved.rowcount != 1:  # type: ignore[attr-defined]
        log.warning(
            "delivery %s: lease of %s lost during the attempt; its outcome (%s) is logged only",
            claimed.delivery_id,
            claimed.owner,
            outcome,
        )
    if disable:
        session.execute(
            update(WebhookSubscription)
            .where(WebhookSubscription.id == claimed.subscription_id)
            .values(enabled=False, updated_at=now)
        )
        log.warning("subscription %s answered 410 Gone: disabled", claimed.subscription_id)
    session.commit()
    log.info(
        "delivery %s (%s %s) attempt %s: %s%s",
        claimed.delivery_id,
        claimed.event_type,
        claimed.event_id,
        claimed.attempt,
        outcome,
        f" ({result.error})" if result.error else "",
    )
    return outcome
