"""Alert rules through the API and the plant file; evaluation over stored results;
the lifecycle (fire, resolve, acknowledge) with its outbox events. SQLite and PostgreSQL.

Baseline results (``drift_rel_<M>``, ``cusum_alarm_<M>``, ``expected_<M>``, ...) are
written directly as rows, in the naming convention of :mod:`api.alerts.conventions`,
since the baselines stage produces them. Numbers are invented for the checks.
"""

from __future__ import annotations

import datetime as dt
import json

import numpy as np
import pytest
from sqlalchemy import func, select, update

from api.alerts.evaluate import evaluate_unit_results
from api.alerts.models import Alert, AlertRuleState
from api.auth import service as auth_service
from api.plants.models import Unit
from api.results.models import ResultValue
from api.webhooks.models import WebhookEvent
from engine.checks import Flag
from tests.api.alerting import MIN, two_boiler_document, write_results
from tests.api.factories import T0, plant_document

RULES = "/api/v1/rules"


def unit_id(session, slug: str = "boiler-a") -> int:
    return session.scalar(select(Unit.id).where(Unit.slug == slug))


def create_rule(client, admin, **body) -> dict:
    body.setdefault("unit", "boiler-a")
    response = client.post(RULES, json=body, headers=admin)
    assert response.status_code == 201, response.text
    return response.json()


def evaluate_in_chunks(session_factory, uid: int, times: list[int], size: int) -> None:
    """Evaluate like the worker does: one transaction per chunk of intervals."""
    for i in range(0, len(times), size):
        with session_factory() as s:
            evaluate_unit_results(s, uid, times[i], times[min(i + size, len(times)) - 1] + MIN)
            s.commit()


def events(session_factory) -> list[tuple[str, dict]]:
    with session_factory() as s:
        rows = s.execute(
            select(WebhookEvent.type, WebhookEvent.body).order_by(WebhookEvent.created_at)
        )
        return [(t, json.loads(b)) for t, b in rows]


# --------------------------------------------------------------------------- rules API


def test_rule_lifecycle_through_the_api(client, plant, admin, make_key) -> None:
    rule = create_rule(
        client,
        admin,
        name="eta-low",
        kind="threshold",
        metric="eta_1",
        below="85 %",
        clear_at=0.86,
        **{"for": "5 min"},
        clear_for=600,
        severity="critical",
    )
    assert {k: rule[k] for k in ("limit", "clear_limit", "for_seconds", "clear_for_seconds")} == {
        "limit": 0.85,
        "clear_limit": 0.86,
        "for_seconds": 300.0,
        "clear_for_seconds": 600.0,
    }
    assert (rule["plant"], rule["unit"], rule["source"], rule["reads"]) == (
        "test-works",
        "boiler-a",
        "api",
        "eta_1",
    )
    assert rule["state"]["phase"] == "ok"

    reader = make_key("read")
    listed = client.get(RULES, params={"unit": "boiler-a"}, headers=reader).json()["rules"]
    assert [r["name"] for r in listed] == ["eta-low"]

    changed = client.put(
        f"{RULES}/{rule['id']}",
        json={
            "name": "eta-low",
            "unit": "boiler-a",
            "kind": "threshold",
            "metric": "eta_1",
            "below": 0.84,
        },
        headers=admin,
    )
    assert changed.status_code == 200, changed.text
    assert (changed.json()["limit"], changed.json()["clear_limit"]) == (0.84, 0.84)

    off = client.patch(f"{RULES}/{rule['id']}", json={"enabled": False}, headers=admin)
    assert off.json()["enabled"] is False
    assert client.delete(f"{RULES}/{rule['id']}", headers=admin).status_code == 204
    assert client.get(f"{RULES}/{rule['id']}", headers=reader).status_code == 404


def test_rule_problems_are_located(client, plant, admin) -> None:
    response = client.post(
        RULES,
        json={
            "name": "bad",
            "unit": "boiler-a",
            "kind": "threshold",
            "metric": "eta_9",
            "above": 1,
            "below": 0.5,
            "side": "upper",
        },
        headers=admin,
    )
    assert response.status_code == 422
    errors = {e["field"]: e["message"] for e in response.json()["errors"]}
    assert errors["side"] == "side: does not apply to a threshold rule"
    assert errors["above"] == "above: give exactly one of above, below"
    prefix = "metric: unit 'boiler-a' (kind boiler) has no metric 'eta_9'; known: "
    assert errors["metric"].startswith(prefix)
    assert {"eta_1", "eta_2", "flags"} <= set(errors["metric"][len(prefix) :].split(", "))

    hysteresis = client.post(
        RULES,
        json={
            "name": "bad",
            "unit": "boiler-a",
            "kind": "threshold",
            "metric": "eta_1",
            "below": 0.85,
            "clear_at": 0.84,
        },
        headers=admin,
    )
    assert hysteresis.json()["errors"] == [
        {
            "field": "clear_at",
            "message": "clear_at: 0.84 must be at or above the firing limit 0.85 "
            "(it is the limit the value must return to)",
        }
    ]
    stale = client.post(
        RULES,
        json={"name": "bad", "unit": "boiler-a", "kind": "stale", "tags": ["SPARE"]},
        headers=admin,
    )
    messages = [e["message"] for e in stale.json()["errors"]]
    assert messages == [
        "after: a stale rule needs 'after': how old a tag's newest reading may be",
        "tags[0]: tag 'SPARE' does not feed unit 'boiler-a'; it feeds FW-FLOW, FW-P, FW-T, "
        "GAS, MS-FLOW, MS-P, MS-T",
    ]
    flags = client.post(
        RULES,
        json={"name": "bad", "unit": "boiler-a", "kind": "inconsistent", "flags": ["HOT"]},
        headers=admin,
    )
    assert flags.json()["errors"][0]["field"] == "flags[0]"
    assert flags.json()["errors"][0]["message"].startswith("flags[0]: unknown flag 'HOT'; known:")


FILE_RULES = {
    "eta-low": {
        "unit": "boiler-a",
        "kind": "threshold",
        "metric": "eta_1",
        "below": "82 %",
        "clear_at": 0.83,
        "for": "5 min",
        "clear_for": "10 min",
    },
    "silent": {"unit": "boiler-a", "kind": "stale", "after": "15 min", "severity": "critical"},
    "physics": {"unit": "boiler-a", "kind": "inconsistent", "flags": ["ABOVE_CARNOT"]},
}


def test_plant_file_rules_apply_export_and_ownership(client, admin) -> None:
    doc = plant_document(rules=FILE_RULES)
    first = client.post("/api/v1/plants", json=doc, headers=admin).json()
    assert {c for c in first["created"] if c.startswith("rule ")} == {
        "rule eta-low",
        "rule silent",
        "rule physics",
    }
    again = client.post("/api/v1/plants", json=doc, headers=admin).json()
    assert again["changed"] is False

    exported = client.get(
        "/api/v1/plants/test-works/file", params={"format": "json"}, headers=admin
    ).json()
    # "82 %" through pint is 0.82 to the last bit or so.
    assert exported["rules"]["eta-low"].pop("below") == pytest.approx(0.82, rel=1e-15)
    assert exported["rules"]["eta-low"] == {
        "unit": "boiler-a",
        "kind": "threshold",
        "metric": "eta_1",
        "clear_at": 0.83,
        "for": 300.0,
        "clear_for": 600.0,
        "severity": "warning",
        "enabled": True,
    }
    exported = client.get(
        "/api/v1/plants/test-works/file", params={"format": "json"}, headers=admin
    ).json()
    assert client.post("/api/v1/plants", json=exported, headers=admin).json()["changed"] is False

    rules = {r["name"]: r for r in client.get(RULES, headers=admin).json()["rules"]}
    assert rules["silent"]["after_seconds"] == 900.0 and rules["silent"]["source"] == "file"
    refused = client.delete(f"{RULES}/{rules['silent']['id']}", headers=admin)
    assert refused.status_code == 409
    assert refused.json()["detail"] == (
        "rule 'silent' comes from the plant file of 'test-works'; delete it there and apply "
        "the file (PATCH enabled works on any rule)"
    )

    create_rule(client, admin, name="mine", kind="threshold", metric="eta_2", above=0.6)
    trimmed = plant_document(rules={"eta-low": FILE_RULES["eta-low"]})
    report = client.post("/api/v1/plants", json=trimmed, headers=admin).json()
    assert sorted(report["deleted"]) == ["rule physics", "rule silent"]
    names = sorted(r["name"] for r in client.get(RULES, headers=admin).json()["rules"])
    assert names == ["eta-low", "mine"]  # the API rule is not the file's to delete


def test_plant_file_rule_errors_name_the_rule(client, admin) -> None:
    doc = plant_document(
        rules={
            "ghost": {"unit": "boiler-z", "kind": "threshold", "metric": "eta_1", "above": 1},
            "typo": {
                "unit": "boiler-a",
                "kind": "drift",
                "metric": "eta_1",
                "below": "-2 %",
                "clear_for": "ten minutes",
            },
        }
    )
    response = client.post("/api/v1/plants", json=doc, headers=admin)
    assert response.status_code == 422
    errors = {e["field"]: e["message"] for e in response.json()["errors"]}
    assert errors["rules.ghost.unit"] == (
        "rules.ghost.unit: unit 'boiler-z' is not defined under units"
    )
    assert errors["rules.typo.clear_for"] == (
        "rules.typo.clear_for: 'ten minutes' is not '<number> <unit>'"
    )
    assert client.get("/api/v1/plants", headers=admin).json()["plants"] == []


# --------------------------------------------------------------------------- evaluation


def test_noisy_metric_near_a_threshold_raises_one_alert(client, plant, admin, session_factory):
    rule = create_rule(
        client,
        admin,
        name="eta-low",
        kind="threshold",
        metric="eta_1",
        below=0.85,
        clear_at=0.86,
        **{"for": "3 min"},
        clear_for="5 min",
    )
    rng = np.random.default_rng(11)
    values = list(0.85 + 0.004 * rng.standard_normal(150)) + [0.87] * 10
    with session_factory() as s:
        uid = unit_id(s)
        times = write_results(s, uid, "eta_1", T0, values)
        s.commit()
    evaluate_in_chunks(session_factory, uid, times, size=25)

    with session_factory() as s:
        alerts = list(s.scalars(select(Alert)))
        state = s.get(AlertRuleState, rule["id"])
    assert len(alerts) == 1
    alert = alerts[0]
    assert (alert.status, alert.rule_name, alert.severity) == ("resolved", "eta-low", "warning")
    # Recovery starts at minute 150; the clear condition has held 5 min at the end of 154.
    assert alert.resolved_at == dt.datetime.fromtimestamp((T0 + 155 * MIN) / 1000, dt.UTC)
    assert alert.resolved_value == 0.87
    first_run = next(i for i in range(2, 150) if all(v < 0.85 for v in values[i - 2 : i + 1]))
    assert alert.fired_at == dt.datetime.fromtimestamp((T0 + (first_run + 1) * MIN) / 1000, dt.UTC)
    assert alert.began_at == dt.datetime.fromtimestamp((T0 + (first_run - 2) * MIN) / 1000, dt.UTC)
    assert state.last_t_ms == times[-1] and state.phase == "ok"
    assert [t for t, _ in events(session_factory)] == ["alert.fired", "alert.resolved"]


def test_drift_rule_reads_the_baseline_columns(client, plant, admin, session_factory) -> None:
    create_rule(
        client,
        admin,
        name="drifting",
        kind="drift",
        metric="eta_1",
        below="-2 %",
        **{"for": "2 min"},
    )
    with session_factory() as s:
        uid = unit_id(s)
        drift_rel = [-0.01, -0.025, -0.03, -0.03]
        times = write_results(s, uid, "drift_rel_eta_1", T0, drift_rel)
        write_results(s, uid, "expected_eta_1", T0, [0.88] * 4)
        write_results(s, uid, "drift_eta_1", T0, [0.88 * d for d in drift_rel])
        write_results(s, uid, "drift_cost_per_h", T0, [3.5, 8.8, 10.6, 10.6])
        write_results(s, uid, "eta_1", T0, [0.88 * (1 + d) for d in drift_rel])
        s.commit()
    evaluate_in_chunks(session_factory, uid, times, size=10)
    ((kind, payload),) = events(session_factory)
    assert kind == "alert.fired"
    # The run began at minute 1 and had lasted 2 min at the end of minute 2.
    assert payload["began_at"] == "2026-01-01T00:01:00Z"
    assert payload["occurred_at"] == "2026-01-01T00:03:00Z"
    # The alert's value is eta_1 itself; what the rule read is in details.
    assert (payload["metric"], payload["value"], payload["value_unit"]) == (
        "eta_1",
        0.88 * (1 - 0.03),
        "1",
    )
    assert payload["details"] == {"read": {"metric": "drift_rel_eta_1", "value": -0.03}}
    assert (payload["expected"], payload["drift_rel"], payload["cost_per_hour"]) == (
        0.88,
        -0.03,
        10.6,
    )
    assert payload["drift"] == pytest.approx(-0.0264, abs=1e-15)
    assert payload["currency"] == "EUR"
    assert payload["alert"]["message"] == (
        "Boiler A: eta_1 drifted -3.00 % from baseline, below -2.00 % for 2 min"
    )


def test_cusum_rule_fires_on_the_chosen_side(client, plant, admin, session_factory) -> None:
    create_rule(
        client,
        admin,
        name="shift",
        kind="cusum",
        metric="eta_1",
        side="lower",
        clear_for="10 min",
        severity="info",
    )
    alarms = [0, 1, 0, 0, -1, 0] + [0] * 10
    with session_factory() as s:
        uid = unit_id(s)
        times = write_results(s, uid, "cusum_alarm_eta_1", T0, alarms)
        s.commit()
    evaluate_in_chunks(session_factory, uid, times, size=4)
    with session_factory() as s:
        alert = s.scalars(select(Alert)).one()
    # The upper alarm at minute 1 does not count; the lower one at minute 4 fires; ten
    # alarm-free minutes (5..14) resolve it at the end of minute 14.
    assert alert.began_at == dt.datetime.fromtimestamp((T0 + 4 * MIN) / 1000, dt.UTC)
    assert alert.resolved_at == dt.datetime.fromtimestamp((T0 + 15 * MIN) / 1000, dt.UTC)
    assert alert.message == "Boiler A: CUSUM alarm on eta_1 (downward shift)"


def test_inconsistent_rule_watches_only_its_flags(client, plant, admin, session_factory) -> None:
    create_rule(client, admin, name="physics", kind="inconsistent")  # default flag set
    thin = 1 << 16  # DataFlag.THIN_DATA: data quality, not physics
    flags = [
        0,
        thin,
        int(Flag.INPUT_OUT_OF_RANGE),
        int(Flag.NEGATIVE_ENTROPY_GENERATION | Flag.ABOVE_CARNOT),
        0,
    ]
    with session_factory() as s:
        uid = unit_id(s)
        times = write_results(s, uid, "flags", T0, flags)
        s.commit()
    evaluate_in_chunks(session_factory, uid, times, size=10)
    with session_factory() as s:
        alert = s.scalars(select(Alert)).one()
    assert alert.details == {"flags": ["NEGATIVE_ENTROPY_GENERATION", "ABOVE_CARNOT"]}
    assert alert.began_at == dt.datetime.fromtimestamp((T0 + 3 * MIN) / 1000, dt.UTC)
    assert alert.status == "resolved"
    assert alert.message == (
        "Boiler A: thermodynamically inconsistent results "
        "(NEGATIVE_ENTROPY_GENERATION, ABOVE_CARNOT)"
    )


def test_results_behind_the_cursor_are_not_evaluated_again(
    client, plant, admin, session_factory
) -> None:
    create_rule(client, admin, name="hot", kind="threshold", metric="eta_1", above=0.95)
    with session_factory() as s:
        uid = unit_id(s)
        times = write_results(s, uid, "eta_1", T0, [0.9, 0.9, 0.9])
        s.commit()
    evaluate_in_chunks(session_factory, uid, times, size=3)
    # A recompute rewrites minute 1 with a value above the limit: too late to alert on.
    with session_factory() as s:
        s.execute(
            update(ResultValue)
            .where(ResultValue.unit_id == uid, ResultValue.t_ms == times[1])
            .values(value=0.99)
        )
        assert evaluate_unit_results(s, uid, times[0], times[-1] + MIN) == (0, 0)
        s.commit()
    # New intervals after the cursor are evaluated.
    with session_factory() as s:
        later = write_results(s, uid, "eta_1", times[-1] + MIN, [0.99])
        assert evaluate_unit_results(s, uid, later[0], later[0] + MIN) == (1, 0)
        s.commit()


# --------------------------------------------------------------------------- lifecycle


def test_acknowledge_records_the_key_name_once(client, plant, admin, session_factory) -> None:
    create_rule(client, admin, name="hot", kind="threshold", metric="eta_1", above=0.95)
    with session_factory() as s:
        uid = unit_id(s)
        times = write_results(s, uid, "eta_1", T0, [0.97])
        s.commit()
        _, night_key = auth_service.create_key(session=s, name="night shift", scopes=["read"])
    evaluate_in_chunks(session_factory, uid, times, size=1)
    night = {"Authorization": f"Bearer {night_key}"}
    (alert,) = client.get("/api/v1/alerts", headers=night).json()["alerts"]
    assert (alert["status"], alert["acknowledged_at"]) == ("firing", None)
    assert alert["unit_url"] == "http://127.0.0.1:8000/units/boiler-a"

    done = client.post(
        f"/api/v1/alerts/{alert['id']}/acknowledge",
        json={"note": "Burner 2 trimmed."},
        headers=night,
    )
    assert done.status_code == 200, done.text
    assert (done.json()["acknowledged_by"], done.json()["note"]) == (
        "night shift",
        "Burner 2 trimmed.",
    )
    twice = client.post(
        f"/api/v1/alerts/{alert['id']}/acknowledge", json={"note": "again"}, headers=admin
    )
    assert twice.status_code == 409
    assert twice.json()["detail"].startswith(
        f"alert {alert['id']} was already acknowledged by 'night shift' at "
    )

    detail = client.get(f"/api/v1/alerts/{alert['id']}", headers=night).json()
    assert [e["type"] for e in detail["events"]] == ["alert.fired", "alert.acknowledged"]
    acked = events(session_factory)[-1][1]
    assert (acked["alert"]["acknowledged_by"], acked["alert"]["note"]) == (
        "night shift",
        "Burner 2 trimmed.",
    )
    empty = client.post(
        f"/api/v1/alerts/{alert['id']}/acknowledge", json={"note": ""}, headers=night
    )
    assert empty.status_code == 422


def test_alert_list_filters(client, admin, session_factory) -> None:
    assert (
        client.post("/api/v1/plants", json=two_boiler_document(), headers=admin).status_code == 200
    )
    for unit, severity in (("boiler-a", "warning"), ("boiler-b", "critical")):
        create_rule(
            client,
            admin,
            unit=unit,
            name=f"hot-{unit}",
            kind="threshold",
            metric="eta_1",
            above=0.95,
            severity=severity,
        )
    with session_factory() as s:
        a, b = unit_id(s, "boiler-a"), unit_id(s, "boiler-b")
        write_results(s, a, "eta_1", T0, [0.97, 0.90])  # fires at 0, resolves at 1
        write_results(s, b, "eta_1", T0 + 10 * MIN, [0.97])  # fires at 10
        s.commit()
    evaluate_in_chunks(session_factory, a, [T0, T0 + MIN], size=2)
    evaluate_in_chunks(session_factory, b, [T0 + 10 * MIN], size=1)

    def units(**params) -> list[str]:
        body = client.get("/api/v1/alerts", params=params, headers=admin).json()
        assert body["total"] == len(body["alerts"])
        return [x["unit"] for x in body["alerts"]]

    assert units() == ["boiler-b", "boiler-a"]  # newest first
    assert units(status="firing") == ["boiler-b"]
    assert units(severity="warning") == ["boiler-a"]
    assert units(unit="boiler-a", plant="test-works") == ["boiler-a"]
    assert units(start="2026-01-01T00:05:00Z") == ["boiler-b"]  # a resolved at 00:02
    assert units(end="2026-01-01T00:05:00Z") == ["boiler-a"]
    assert units(acknowledged=False) == ["boiler-b", "boiler-a"]
    bad = client.get("/api/v1/alerts", params={"status": "open"}, headers=admin)
    assert bad.status_code == 422 and bad.json()["errors"][0]["field"] == "status"


def test_deleting_a_rule_resolves_its_alert_and_keeps_history(
    client, plant, admin, session_factory
) -> None:
    rule = create_rule(client, admin, name="hot", kind="threshold", metric="eta_1", above=0.95)
    with session_factory() as s:
        uid = unit_id(s)
        times = write_results(s, uid, "eta_1", T0, [0.97])
        s.commit()
    evaluate_in_chunks(session_factory, uid, times, size=1)
    assert client.delete(f"{RULES}/{rule['id']}", headers=admin).status_code == 204
    (alert,) = client.get("/api/v1/alerts", headers=admin).json()["alerts"]
    assert (alert["status"], alert["rule_id"], alert["rule"]) == ("resolved", None, "hot")
    assert alert["details"] == {"resolved_because": "rule deleted"}
    kinds = [t for t, _ in events(session_factory)]
    assert kinds == ["alert.fired", "alert.resolved"]


def test_outbox_rows_roll_back_with_the_alert(client, plant, admin, session_factory) -> None:
    rule = create_rule(client, admin, name="hot", kind="threshold", metric="eta_1", above=0.95)
    with session_factory() as s:
        uid = unit_id(s)
        write_results(s, uid, "eta_1", T0, [0.97])
        s.commit()
    with session_factory() as s:
        assert evaluate_unit_results(s, uid, T0, T0 + MIN) == (1, 0)
        s.rollback()  # the chunk transaction failing
    with session_factory() as s:
        assert s.scalar(select(func.count()).select_from(Alert)) == 0
        assert s.scalar(select(func.count()).select_from(WebhookEvent)) == 0
        assert s.get(AlertRuleState, rule["id"]).last_t_ms is None
