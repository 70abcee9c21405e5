"""Webhook delivery over real HTTP to a receiver on 127.0.0.1, on SQLite and PostgreSQL.

The receiver (:mod:`tests.api.alerting`) checks every request with the reference
implementation of the Standard Webhooks specification (PyPI ``standardwebhooks``) and
deduplicates on ``webhook-id``. Short back-off settings keep the suite fast.
"""

from __future__ import annotations

import datetime as dt
import json
import os
import signal
import subprocess
import sys
import threading
import time
from collections.abc import Callable
from pathlib import Path

import pytest
from sqlalchemy import select, update

from api.alerts.evaluate import evaluate_unit_results
from api.pipeline.worker import run_once as compute
from api.plants.models import Unit
from api.results.models import ResultValue
from api.webhooks.delivery import DeliveryOptions
from api.webhooks.models import WebhookAttempt, WebhookDelivery, WebhookEvent, WebhookSubscription
from api.webhooks.worker import run_once as deliver
from tests.api.alerting import MIN, TestReceiver, two_boiler_document, write_results
from tests.api.factories import T0
from tests.api.test_pipeline import push, readings

WEBHOOKS = "/api/v1/webhooks"
PROJECT = Path(__file__).resolve().parents[2]


@pytest.fixture
def settings(settings):
    """The shared test settings with loopback allowed (the receiver is on 127.0.0.1)."""
    return settings.model_copy(update={"webhook_allow_list": ["127.0.0.1"]})


@pytest.fixture
def receiver():
    started: list[TestReceiver] = []

    def make(secrets: list[str], **kwargs) -> TestReceiver:
        r = TestReceiver(secrets, **kwargs).start()
        started.append(r)
        return r

    yield make
    for r in started:
        if r.hold is not None:
            r.hold.set()
        r.stop()


def options(**changes) -> DeliveryOptions:
    values = dict(
        timeout_s=5.0, max_age_s=60.0, backoff_s=0.05, backoff_max_s=0.2, allow_list=("127.0.0.1",)
    )
    values.update(changes)
    return DeliveryOptions(**values)


def deliver_until(
    session_factory,
    opts,
    done: Callable[[], bool],
    seconds: float = 20.0,
    max_attempts: int | None = None,
) -> None:
    deadline = time.monotonic() + seconds
    while not done():
        assert time.monotonic() < deadline, "deliveries did not finish in time"
        deliver(session_factory, opts, owner="test-worker", max_attempts=max_attempts)
        time.sleep(0.02)


def subscribe(client, admin, url: str, **body) -> dict:
    response = client.post(WEBHOOKS, json={"url": url, **body}, headers=admin)
    assert response.status_code == 201, response.text
    return response.json()


def states(session_factory) -> list[str]:
    with session_factory() as s:
        return list(s.scalars(select(WebhookDelivery.state).order_by(WebhookDelivery.id)))


def test_a_reading_over_the_limit_reaches_the_receiver_signed(
    client, plant, admin, make_key, session_factory, receiver
) -> None:
    rule = client.post(
        "/api/v1/rules",
        json={
            "name": "eta-seen",
            "unit": "boiler-a",
            "kind": "threshold",
            "metric": "eta_1",
            "above": 0.5,
            "severity": "critical",
        },
        headers=admin,
    )
    assert rule.status_code == 201, rule.text
    sub = subscribe(client, admin, "http://127.0.0.1:1/placeholder")
    r = receiver([sub["secret"]])
    client.patch(f"{WEBHOOKS}/{sub['id']}", json={"url": r.url}, headers=admin)

    push(client, make_key("ingest"), readings(3, step_s=60), step_s=60)
    assert compute(session_factory, "compute-test") == 1
    deliver_until(session_factory, options(), lambda: len(r.events) == 1)

    (arrival,) = r.arrivals
    assert arrival.verified_by == [0]
    payload = json.loads(arrival.body)
    assert payload["id"] == arrival.msg_id and arrival.msg_id.startswith("evt_")
    with session_factory() as s:
        uid = s.scalar(select(Unit.id).where(Unit.slug == "boiler-a"))
        eta_first = s.scalar(
            select(ResultValue.value).where(
                ResultValue.unit_id == uid, ResultValue.metric == "eta_1", ResultValue.t_ms == T0
            )
        )
    assert 0.5 < eta_first < 1.0
    assert {k: payload[k] for k in ("type", "severity", "metric", "value", "value_unit")} == {
        "type": "alert.fired",
        "severity": "critical",
        "metric": "eta_1",
        "value": eta_first,
        "value_unit": "1",
    }
    assert payload["began_at"] == "2026-01-01T00:00:00Z"
    assert payload["occurred_at"] == "2026-01-01T00:01:00Z"
    assert payload["unit"] == {
        "slug": "boiler-a",
        "name": "Boiler A",
        "kind": "boiler",
        "url": "http://127.0.0.1:8000/units/boiler-a",
    }
    assert payload["plant"] == {"slug": "test-works", "name": "Test Works"}
    assert (payload["expected"], payload["drift"], payload["cost_per_hour"]) == (None, None, None)
    assert payload["rule"]["name"] == "eta-seen" and payload["rule"]["limit"] == 0.5

    log = client.get(f"{WEBHOOKS}/{sub['id']}/deliveries", headers=admin).json()
    (delivery,) = log["deliveries"]
    assert (delivery["state"], delivery["attempts"], delivery["event_type"]) == (
        "delivered",
        1,
        "alert.fired",
    )
    (first,) = delivery["attempt_log"]
    assert (first["outcome"], first["status_code"], first["address"]) == (
        "delivered",
        204,
        "127.0.0.1",
    )
    assert first["duration_ms"] > 0


def _episodes(session_factory, slugs: list[str], flips: int) -> dict[str, list[str]]:
    """Per unit, alternate fired/resolved ``flips`` times; the event ids in order."""
    out = {}
    with session_factory() as s:
        for slug in slugs:
            uid = s.scalar(select(Unit.id).where(Unit.slug == slug))
            values = [0.97 if i % 2 == 0 else 0.90 for i in range(flips)]
            write_results(s, uid, "eta_1", T0, values)
            for i in range(flips):  # one transaction per interval, like the worker's chunks
                evaluate_unit_results(s, uid, T0 + i * MIN, T0 + (i + 1) * MIN)
                s.commit()
            out[slug] = list(
                s.scalars(
                    select(WebhookEvent.id)
                    .where(WebhookEvent.ordering_key == f"unit:{uid}")
                    .order_by(WebhookEvent.created_at, WebhookEvent.occurred_at)
                )
            )
    return out


@pytest.fixture
def two_units_with_rules(client, admin) -> list[str]:
    assert (
        client.post("/api/v1/plants", json=two_boiler_document(), headers=admin).status_code == 200
    )
    for slug in ("boiler-a", "boiler-b"):
        response = client.post(
            "/api/v1/rules",
            json={
                "name": f"hot-{slug}",
                "unit": slug,
                "kind": "threshold",
                "metric": "eta_1",
                "above": 0.95,
            },
            headers=admin,
        )
        assert response.status_code == 201, response.text
    return ["boiler-a", "boiler-b"]


def test_receiver_down_then_up_gets_every_event_once_in_order(
    client, admin, two_units_with_rules, session_factory, receiver
) -> None:
    r = receiver(["whsec_" + "A" * 43])  # a placeholder; the real secret is set below
    port = r.port
    r.stop()  # the receiver is down: connections to its port are refused
    sub = subscribe(client, admin, f"http://127.0.0.1:{port}/hook")
    ids = _episodes(session_factory, two_units_with_rules, flips=4)
    assert [len(v) for v in ids.values()] == [4, 4]

    down_until = time.monotonic() + 1.0
    while time.monotonic() < down_until:
        deliver(session_factory, options(), owner="test-worker")
        time.sleep(0.02)
    with session_factory() as s:
        tried = s.execute(
            select(WebhookDelivery.event_id, WebhookAttempt.outcome, WebhookAttempt.error).join(
                WebhookAttempt, WebhookAttempt.delivery_id == WebhookDelivery.id
            )
        ).all()
    # While a unit's first event is undelivered, its later events wait: only the two
    # heads were attempted, again and again.
    assert {event for event, _, _ in tried} == {ids["boiler-a"][0], ids["boiler-b"][0]}
    assert len(tried) > 4
    assert {outcome for _, outcome, _ in tried} == {"retry"}
    assert all(error.startswith("ConnectError: ") for _, _, error in tried)

    up = receiver([sub["secret"]], port=port)
    deliver_until(session_factory, options(), lambda: states(session_factory) == ["delivered"] * 8)

    assert set(up.events) == set(ids["boiler-a"]) | set(ids["boiler-b"])
    assert all(a.verified_by == [0] for a in up.arrivals) and up.rejected == []
    for slug, wanted in ids.items():
        got = [i for i, p in up.events.items() if p["unit"]["slug"] == slug]
        assert got == wanted  # in the order they were created
        kinds = [up.events[i]["type"] for i in got]
        assert kinds == ["alert.fired", "alert.resolved"] * 2


CHILD = """
import sys
import api.models  # every table, for the foreign keys of the outbox
from api.core.db import create_db_engine, make_session_factory
from api.webhooks.delivery import DeliveryOptions
from api.webhooks.worker import run_once

factory = make_session_factory(create_db_engine(sys.argv[1]))
run_once(factory, DeliveryOptions(timeout_s=20.0, allow_list=("127.0.0.1",)), owner="doomed")
"""


def test_delivery_worker_killed_mid_delivery_loses_nothing(
    client, admin, two_units_with_rules, session_factory, receiver, db_url
) -> None:
    sub = subscribe(client, admin, "http://127.0.0.1:1/placeholder")
    r = receiver([sub["secret"]])
    client.patch(f"{WEBHOOKS}/{sub['id']}", json={"url": r.url}, headers=admin)
    ids = _episodes(session_factory, ["boiler-a"], flips=3)["boiler-a"]
    r.hold = threading.Event()  # keep the first request open

    env = dict(os.environ, PYTHONPATH=str(PROJECT))
    child = subprocess.Popen(
        [sys.executable, "-c", CHILD, db_url],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        env=env,
        cwd=PROJECT,
    )
    try:
        assert r.got_request.wait(60), child.stderr.read() if child.poll() is not None else ""
        child.send_signal(signal.SIGKILL)  # mid-delivery: the request is open
        child.wait(30)
    finally:
        if child.poll() is None:
            child.kill()
            child.wait(30)
    assert child.returncode == -signal.SIGKILL
    r.hold.set()
    r.hold = None
    with session_factory() as s:
        held = s.scalars(select(WebhookDelivery).order_by(WebhookDelivery.id)).first()
        assert (held.state, held.event_id, held.lease_owner) == ("leased", ids[0], "doomed")
        lease_expires = held.lease_expires_at

    # A new worker, once the dead one's lease has expired, takes over. (Its clock runs
    # ahead by the rest of the lease, 3 x 20 s + 30 s at most: within the 5 min a
    # receiver tolerates on webhook-timestamp.)
    shift = lease_expires + dt.timedelta(seconds=1) - dt.datetime.now(dt.UTC)
    assert shift < dt.timedelta(seconds=120)
    opts = options(clock=lambda: dt.datetime.now(dt.UTC) + shift, max_age_s=3600.0)
    deliver_until(session_factory, opts, lambda: states(session_factory) == ["delivered"] * 3)

    assert list(r.events) == ids  # every event, in order, each once after deduplication
    assert [a.msg_id for a in r.arrivals].count(ids[0]) == 2  # the killed attempt + the retry
    assert r.duplicates == 1
    with session_factory() as s:
        outcomes = s.execute(
            select(WebhookAttempt.outcome, WebhookAttempt.error)
            .join(WebhookDelivery, WebhookDelivery.id == WebhookAttempt.delivery_id)
            .where(WebhookDelivery.event_id == ids[0])
            .order_by(WebhookAttempt.number)
        ).all()
    assert [o for o, _ in outcomes] == ["abandoned", "delivered"]
    assert outcomes[0][1] == "worker doomed stopped during the attempt; lease expired"


def test_secret_rotation_overlap_sends_both_signatures(
    client, admin, session_factory, receiver
) -> None:
    sub = subscribe(client, admin, "http://127.0.0.1:1/placeholder")
    old = sub["secret"]
    new = client.post(
        f"{WEBHOOKS}/{sub['id']}/rotate-secret", json={"overlap_seconds": 3600}, headers=admin
    ).json()["secret"]
    r = receiver([old, new])
    client.patch(f"{WEBHOOKS}/{sub['id']}", json={"url": r.url}, headers=admin)

    client.post(f"{WEBHOOKS}/{sub['id']}/test", headers=admin)
    deliver_until(session_factory, options(), lambda: len(r.arrivals) == 1)
    first = r.arrivals[0]
    assert first.verified_by == [0, 1]  # a receiver on either secret accepts it
    assert first.headers["webhook-signature"].count("v1,") == 2
    assert json.loads(first.body)["type"] == "webhook.test"

    # Once the overlap has passed, only the new secret signs.
    with session_factory() as s:
        s.execute(
            update(WebhookSubscription).values(
                previous_expires_at=dt.datetime.now(dt.UTC) - dt.timedelta(seconds=1)
            )
        )
        s.commit()
    client.post(f"{WEBHOOKS}/{sub['id']}/test", headers=admin)
    deliver_until(session_factory, options(), lambda: len(r.arrivals) == 2)
    second = r.arrivals[1]
    assert second.verified_by == [1]
    assert second.headers["webhook-signature"].count("v1,") == 1


def test_retries_end_at_the_maximum_age_and_unblock_the_unit(
    client, admin, two_units_with_rules, session_factory, receiver
) -> None:
    sub = subscribe(client, admin, "http://127.0.0.1:1/placeholder")
    r = receiver([sub["secret"]], status=503)
    client.patch(f"{WEBHOOKS}/{sub['id']}", json={"url": r.url}, headers=admin)
    ids = _episodes(session_factory, ["boiler-a"], flips=2)["boiler-a"]

    opts = options(max_age_s=0.5)
    # One attempt per call, so the unit's second event is not tried with this max age.
    deliver_until(
        session_factory, opts, lambda: states(session_factory)[0] == "failed", max_attempts=1
    )
    with session_factory() as s:
        log = s.execute(
            select(WebhookAttempt.outcome, WebhookAttempt.status_code, WebhookAttempt.error)
            .join(WebhookDelivery, WebhookDelivery.id == WebhookAttempt.delivery_id)
            .where(WebhookDelivery.event_id == ids[0])
            .order_by(WebhookAttempt.number)
        ).all()
    assert len(log) >= 2
    assert {(o, c, e) for o, c, e in log[:-1]} == {("retry", 503, "HTTP 503")}
    # The last word: an attempt that failed past the maximum age, or a retry found too
    # old before it was sent (which of the two depends on the back-off's jitter).
    assert log[-1] in {
        ("failed", 503, "HTTP 503"),
        ("expired", None, "the event is older than the maximum age of 0.5 s"),
    }

    r.status = 204  # the receiver recovers; the unit's next event is no longer held back
    deliver_until(session_factory, options(), lambda: states(session_factory)[1] == "delivered")
    assert list(r.events) == ids  # the failed one arrived (and was refused) too
    listing = client.get(
        f"{WEBHOOKS}/{sub['id']}/deliveries", params={"state": "failed"}, headers=admin
    ).json()
    assert [d["event_id"] for d in listing["deliveries"]] == [ids[0]]
    assert client.get(f"{WEBHOOKS}/{sub['id']}", headers=admin).json()["failed"] == 1


def test_gone_disables_the_subscription(client, admin, session_factory, receiver) -> None:
    sub = subscribe(client, admin, "http://127.0.0.1:1/placeholder")
    r = receiver([sub["secret"]], status=410)
    client.patch(f"{WEBHOOKS}/{sub['id']}", json={"url": r.url}, headers=admin)
    client.post(f"{WEBHOOKS}/{sub['id']}/test", headers=admin)
    deliver_until(session_factory, options(), lambda: states(session_factory) == ["failed"])
    assert client.get(f"{WEBHOOKS}/{sub['id']}", headers=admin).json()["enabled"] is False


def test_filters_choose_the_subscriptions(client, admin, two_units_with_rules, session_factory):
    only_b = subscribe(client, admin, "http://127.0.0.1:1/b", units=["boiler-b"])
    fired = subscribe(client, admin, "http://127.0.0.1:1/f", event_types=["alert.fired"])
    critical = subscribe(client, admin, "http://127.0.0.1:1/c", severities=["critical"])
    _episodes(session_factory, ["boiler-a", "boiler-b"], flips=2)
    with session_factory() as s:
        rows = s.execute(
            select(WebhookDelivery.subscription_id, WebhookEvent.type, WebhookEvent.body).join(
                WebhookEvent, WebhookEvent.id == WebhookDelivery.event_id
            )
        ).all()
    per = {
        sid: sorted(
            (json.loads(body)["unit"]["slug"], kind) for s2, kind, body in rows if s2 == sid
        )
        for sid in (only_b["id"], fired["id"], critical["id"])
    }
    assert per[only_b["id"]] == [("boiler-b", "alert.fired"), ("boiler-b", "alert.resolved")]
    assert per[fired["id"]] == [("boiler-a", "alert.fired"), ("boiler-b", "alert.fired")]
    assert per[critical["id"]] == []  # the rules are warnings


def test_the_demo_receiver_verifies_and_deduplicates(client, admin, session_factory) -> None:
    """``lostwork webhook-receiver``'s server: events once each, forgeries refused."""
    import threading as th

    import httpx

    from api.webhooks.receiver import Receiver, describe

    got: list[tuple[str, dict]] = []
    rejected: list[str] = []
    sub = subscribe(client, admin, "http://127.0.0.1:1/placeholder")
    server = Receiver(
        ("127.0.0.1", 0), [sub["secret"]], lambda i, p: got.append((i, p)), rejected.append
    )
    th.Thread(target=server.serve_forever, args=(0.05,), daemon=True).start()
    try:
        url = f"http://127.0.0.1:{server.server_address[1]}/"
        client.patch(f"{WEBHOOKS}/{sub['id']}", json={"url": url}, headers=admin)
        client.post(f"{WEBHOOKS}/{sub['id']}/test", headers=admin)
        deliver_until(session_factory, options(), lambda: states(session_factory) == ["delivered"])
        # The same event once more (a retry after a lost answer): acknowledged, not repeated.
        with session_factory() as s:
            s.execute(update(WebhookDelivery).values(state="pending"))
            s.commit()
        deliver_until(session_factory, options(), lambda: states(session_factory) == ["delivered"])
        forged = httpx.post(
            url,
            content=b"{}",
            headers={
                "webhook-id": "evt_x",
                "webhook-timestamp": str(int(time.time())),
                "webhook-signature": "v1,AAAA",
            },
            timeout=5,
        )
    finally:
        server.shutdown()
        server.server_close()
    assert len(got) == 1 and server.duplicates == 1
    assert describe(got[0][1]) == (
        "webhook.test: A test event from lostwork: the subscription and its secret work."
    )
    assert forged.status_code == 401 and rejected == ["no signature matches the secret"]
