"""Data staleness: a tag that stops raises an alert, its return resolves it; evaluated
on a timer (wall clock), not on results. SQLite and PostgreSQL. Times are chosen in the
test; readings go in through the API."""

from __future__ import annotations

import datetime as dt
import json
import time

import numpy as np
from sqlalchemy import select

from api.alerts.models import Alert
from api.alerts.staleness import evaluate_staleness
from api.alerts.timer import StaleTimer
from api.webhooks.models import WebhookEvent
from tests.api.test_pipeline import BASE, push

MIN = 60_000


def at(ms: int) -> dt.datetime:
    return dt.datetime.fromtimestamp(ms / 1000, dt.UTC)


def rule(client, admin, name: str, **body) -> dict:
    response = client.post(
        "/api/v1/rules",
        json={"name": name, "unit": "boiler-a", "kind": "stale", "after": "2 min", **body},
        headers=admin,
    )
    assert response.status_code == 201, response.text
    return response.json()


def alerts(session_factory) -> dict[str, Alert]:
    with session_factory() as s:
        return {a.rule_name: a for a in s.scalars(select(Alert).order_by(Alert.id))}


def test_a_stopped_tag_fires_and_its_return_resolves(
    client, plant, admin, make_key, session_factory
) -> None:
    ingest = make_key("ingest")
    rule(client, admin, "flow-silent", tags=["FW-FLOW"])
    rule(client, admin, "unit-silent", severity="critical")  # the required-role tags
    t0 = (int(time.time() * 1000) // MIN - 60) * MIN
    push(client, ingest, {tag: np.full(5, v) for tag, v in BASE.items()}, step_s=60, t0=t0)
    last = t0 + 4 * MIN

    with session_factory() as s:
        assert evaluate_staleness(s, now=at(last + 1 * MIN)) == (0, 0)
        assert evaluate_staleness(s, now=at(last + 3 * MIN)) == (2, 0)
    fired = alerts(session_factory)
    flow = fired["flow-silent"]
    # Stale since the newest reading + 2 min; at the check 3 min had passed since it.
    assert (flow.status, flow.began_at, flow.fired_at) == (
        "firing",
        at(last + 2 * MIN),
        at(last + 3 * MIN),
    )
    assert (flow.metric, flow.value) == (None, 180.0)
    stamp = at(last).isoformat().replace("+00:00", "Z")
    assert flow.details == {"stale_tags": {"FW-FLOW": stamp}}
    assert flow.message == "Boiler A: no readings from FW-FLOW for more than 2 min"
    # Required roles of a boiler with a volume-metered fuel: GAS (one of the fuel flow
    # alternatives), feedwater and steam flow, pressure and temperature.
    assert sorted(fired["unit-silent"].details["stale_tags"]) == [
        "FW-FLOW",
        "FW-P",
        "FW-T",
        "GAS",
        "MS-FLOW",
        "MS-P",
        "MS-T",
    ]

    # FW-FLOW comes back; the other tags stay silent.
    push(client, ingest, {"FW-FLOW": np.array([60.0])}, t0=last + 3 * MIN + 30_000)
    with session_factory() as s:
        assert evaluate_staleness(s, now=at(last + 4 * MIN)) == (0, 1)
        assert evaluate_staleness(s, now=at(last + 5 * MIN)) == (0, 0)  # nothing repeats
    after = alerts(session_factory)
    assert (after["flow-silent"].status, after["flow-silent"].resolved_at) == (
        "resolved",
        at(last + 4 * MIN),
    )
    assert after["unit-silent"].status == "firing"
    with session_factory() as s:
        kinds = [
            (json.loads(b)["rule"]["name"], t)
            for t, b in s.execute(
                select(WebhookEvent.type, WebhookEvent.body).order_by(WebhookEvent.created_at)
            )
        ]
    assert sorted(kinds) == [
        ("flow-silent", "alert.fired"),
        ("flow-silent", "alert.resolved"),
        ("unit-silent", "alert.fired"),
    ]


def test_minimum_and_clear_durations_apply(client, plant, admin, make_key, session_factory):
    ingest = make_key("ingest")
    rule(client, admin, "slow", tags=["FW-T"], **{"for": "3 min"}, clear_for="2 min")
    t0 = (int(time.time() * 1000) // MIN - 60) * MIN
    push(client, ingest, {"FW-T": np.array([200.0])}, t0=t0)
    with session_factory() as s:
        assert evaluate_staleness(s, now=at(t0 + 4 * MIN)) == (0, 0)  # stale 2 min < 3
        assert evaluate_staleness(s, now=at(t0 + 5 * MIN)) == (1, 0)
    S = 1000
    push(client, ingest, {"FW-T": np.array([201.0])}, t0=t0 + 5 * MIN + 30 * S)
    with session_factory() as s:
        assert evaluate_staleness(s, now=at(t0 + 6 * MIN)) == (0, 0)  # clear since 6:00
        # 7:40: the 5:30 reading is 2:10 old, stale again: the clear run starts over.
        assert evaluate_staleness(s, now=at(t0 + 7 * MIN + 40 * S)) == (0, 0)
    push(client, ingest, {"FW-T": np.array([202.0])}, t0=t0 + 7 * MIN + 50 * S)
    with session_factory() as s:
        assert evaluate_staleness(s, now=at(t0 + 8 * MIN)) == (0, 0)  # clear since 8:00
        assert evaluate_staleness(s, now=at(t0 + 9 * MIN + 45 * S)) == (0, 0)  # 1:45 < 2
    push(client, ingest, {"FW-T": np.array([203.0])}, t0=t0 + 9 * MIN + 50 * S)
    with session_factory() as s:
        assert evaluate_staleness(s, now=at(t0 + 10 * MIN)) == (0, 1)
    assert alerts(session_factory)["slow"].resolved_at == at(t0 + 10 * MIN)


def test_tags_that_never_reported_raise_nothing(client, plant, admin, session_factory) -> None:
    rule(client, admin, "quiet", tags=["FW-FLOW"])
    with session_factory() as s:
        assert evaluate_staleness(s, now=dt.datetime.now(dt.UTC) + dt.timedelta(days=1)) == (0, 0)


def test_the_timer_thread_evaluates_on_its_own(
    client, plant, admin, make_key, session_factory
) -> None:
    rule(client, admin, "flow-silent", tags=["FW-FLOW"])
    t0 = (int(time.time() * 1000) // MIN - 60) * MIN
    push(client, make_key("ingest"), {"FW-FLOW": np.array([60.0])}, t0=t0)
    timer = StaleTimer(session_factory, every_seconds=0.05)
    timer.start()
    try:
        deadline = time.monotonic() + 20
        while not alerts(session_factory):
            assert time.monotonic() < deadline, "the timer raised no alert"
            time.sleep(0.05)
    finally:
        timer.stop()
    assert not timer.is_alive() and timer.ticks >= 1
    assert alerts(session_factory)["flow-silent"].began_at == at(t0 + 2 * MIN)
