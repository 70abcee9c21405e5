"""Rules evaluated by the compute worker inside its chunk transactions, the embedded
service end to end (reading -> result -> alert -> signed webhook), and the CLI.
SQLite and PostgreSQL."""

from __future__ import annotations

import json
import logging
import time

import pytest
from fastapi.testclient import TestClient
from sqlalchemy import func, select
from typer.testing import CliRunner

from api.alerts import evaluate
from api.alerts.models import Alert
from api.cli import app as cli
from api.core.config import get_settings
from api.main import create_app
from api.pipeline import worker
from api.pipeline.models import WorkSpan
from api.results.models import ResultValue
from api.webhooks.models import WebhookEvent
from tests.api.alerting import TestReceiver
from tests.api.test_pipeline import push, readings

RULE = {
    "name": "eta-seen",
    "unit": "boiler-a",
    "kind": "threshold",
    "metric": "eta_1",
    "above": 0.5,
}


def count(session_factory, model) -> int:
    with session_factory() as s:
        return s.scalar(select(func.count()).select_from(model))


@pytest.fixture
def with_rule(client, plant, admin, make_key) -> dict[str, str]:
    assert client.post("/api/v1/rules", json=RULE, headers=admin).status_code == 201
    return make_key("ingest")


def test_the_worker_fires_in_the_chunk_transaction(client, with_rule, session_factory) -> None:
    push(client, with_rule, readings(3, step_s=60), step_s=60)
    assert worker.run_once(session_factory, "w") == 1
    with session_factory() as s:
        alert = s.scalars(select(Alert)).one()
        (kind,) = s.scalars(select(WebhookEvent.type))
    assert (alert.status, alert.rule_name, kind) == ("firing", "eta-seen", "alert.fired")


def test_a_failing_chunk_leaves_neither_results_nor_alerts(
    client, with_rule, session_factory
) -> None:
    def broken(session, unit_id, start, end):  # a later stage failing after the rules ran
        assert count_in(session, Alert) == 1  # the alert exists inside the transaction
        raise RuntimeError("later stage failed")

    def count_in(session, model) -> int:
        return session.scalar(select(func.count()).select_from(model))

    worker.register_after_compute(broken)
    try:
        push(client, with_rule, readings(3, step_s=60), step_s=60)
        worker.run_once(session_factory, "w", max_spans=1)
    finally:
        worker.unregister_after_compute(broken)
    assert count(session_factory, ResultValue) == 0
    assert count(session_factory, Alert) == 0
    assert count(session_factory, WebhookEvent) == 0
    with session_factory() as s:
        assert s.scalar(select(WorkSpan.last_error)) == "RuntimeError: later stage failed"


def test_a_failing_evaluation_keeps_the_results(
    client, with_rule, session_factory, monkeypatch, caplog
) -> None:
    def fail(*args, **kwargs):
        raise ValueError("rule bug")

    monkeypatch.setattr(evaluate, "evaluate_unit_results", fail)
    push(client, with_rule, readings(3, step_s=60), step_s=60)
    with caplog.at_level(logging.ERROR, logger="lostwork.alerts"):
        assert worker.run_once(session_factory, "w") == 1
    assert count(session_factory, ResultValue) > 0
    assert count(session_factory, Alert) == 0
    assert "alert rules of unit" in caplog.text and "failed; results kept" in caplog.text


def test_embedded_service_from_reading_to_signed_webhook(
    settings, session_factory, make_key
) -> None:
    """``lostwork serve`` in one process: compute worker, staleness timer and delivery
    thread started by the app; a reading over the limit ends at the receiver."""
    embedded = settings.model_copy(
        update={
            "embedded_worker": True,
            "webhook_allow_list": ["127.0.0.1"],
            "webhook_poll_seconds": 0.1,
        }
    )
    app = create_app(embedded, session_factory=session_factory, mount_dashboard=False)
    admin = make_key("admin")
    with TestClient(app, raise_server_exceptions=False) as client:
        from tests.api.factories import plant_document

        assert (
            client.post("/api/v1/plants", json=plant_document(), headers=admin).status_code == 200
        )
        assert client.post("/api/v1/rules", json=RULE, headers=admin).status_code == 201
        sub = client.post(
            "/api/v1/webhooks", json={"url": "http://127.0.0.1:1/x"}, headers=admin
        ).json()
        receiver = TestReceiver([sub["secret"]]).start()
        try:
            client.patch(f"/api/v1/webhooks/{sub['id']}", json={"url": receiver.url}, headers=admin)
            push(client, make_key("ingest"), readings(2, step_s=60), step_s=60)
            deadline = time.monotonic() + 30
            while not receiver.events:
                assert time.monotonic() < deadline, "no webhook arrived"
                time.sleep(0.05)
        finally:
            receiver.stop()
    (arrival,) = receiver.arrivals
    assert arrival.verified_by == [0]
    assert json.loads(arrival.body)["type"] == "alert.fired"


# --------------------------------------------------------------------------- CLI


@pytest.fixture
def run(db_url, session_factory, monkeypatch):
    monkeypatch.setenv("LOSTWORK_DATABASE_URL", db_url)
    monkeypatch.setenv("LOSTWORK_WEBHOOK_ALLOW_LIST", "127.0.0.1")
    get_settings.cache_clear()
    runner = CliRunner()
    yield lambda *args: runner.invoke(cli, [str(a) for a in args])
    get_settings.cache_clear()


def test_rules_and_alerts_from_the_command_line(run, client, plant, make_key, session_factory):
    added = run(
        "rules",
        "add",
        "--name",
        "eta-seen",
        "--unit",
        "boiler-a",
        "--kind",
        "threshold",
        "--metric",
        "eta_1",
        "--above",
        "50 %",
        "--for",
        "1 min",
    )
    assert added.exit_code == 0, added.output
    assert added.output.strip().endswith("(eta-seen) created: eta_1 above 0.5 for 60 s")
    bad = run("rules", "add", "--name", "x", "--unit", "boiler-a", "--kind", "threshold")
    assert bad.exit_code == 1
    assert "metric: a threshold rule needs a metric" in bad.output

    listed = run("rules", "list", "--unit", "boiler-a")
    assert "eta-seen" in listed.output and "ok" in listed.output and " api " in listed.output

    push(client, make_key("ingest"), readings(2, step_s=60), step_s=60)
    worker.run_once(session_factory, "w")
    alerts = run("alerts", "list", "--status", "firing")
    assert alerts.output.strip().endswith("1 of 1 alert(s)")
    alert_id = alerts.output.split()[0]
    acked = run("alerts", "ack", alert_id, "--note", "seen", "--by", "operator")
    assert acked.output.strip() == f"alert {alert_id} acknowledged"
    with session_factory() as s:
        assert s.scalar(select(Alert.acknowledged_by)) == "operator"

    rule_id = listed.output.split()[0]
    assert run("rules", "disable", rule_id).output.strip() == f"rule {rule_id} (eta-seen) disabled"
    assert run("rules", "delete", rule_id).output.strip() == f"rule {rule_id} deleted"


def test_deliver_once_from_the_command_line(run, client) -> None:
    from api.webhooks import service
    from api.webhooks.schemas import SubscriptionCreate

    receiver = TestReceiver([]).start()
    try:
        with client.app.state.session_factory() as s:
            created = service.create_subscription(
                session=s, body=SubscriptionCreate(url=receiver.url), allow_list=["127.0.0.1"]
            )
            receiver.secrets.append(created.secret)
            service.send_test(session=s, subscription_id=created.id)
        result = run("deliver", "--once")
        assert result.exit_code == 0, result.output
        assert result.output.strip().endswith("stopped after 1 attempt(s)")
    finally:
        receiver.stop()
    assert [a.verified_by for a in receiver.arrivals] == [[0]]
