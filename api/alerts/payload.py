"""The JSON document a webhook receiver gets for an alert event (our own design).

::

    {
      "type": "alert.fired",                 # alert.fired | alert.resolved | alert.acknowledged
      "id": "evt_5f0c...",                   # = webhook-id header; the same on every retry
      "occurred_at": "2026-01-01T00:05:00Z", # when this event happened (data time for
                                             # fired/resolved, wall clock for acknowledged)
      "severity": "warning",                 # info | warning | critical
      "began_at": "2026-01-01T00:01:00Z",    # when the condition began
      "plant": {"slug": "...", "name": "..."},
      "unit": {"slug": "...", "name": "...", "kind": "boiler",
               "url": "<public_base_url>/units/<slug>"},     # the unit's dashboard page
      "metric": "eta_1",                     # null for stale rules
      "value": 0.8123,                       # SI: the metric's value when the alert fired
                                             # (resolved: when it resolved); stale rules:
                                             # age of the oldest silent tag [s]
      "value_unit": "1",                     # SI unit of value ("1": a fraction)
      "expected": null,                      # baseline expected value (null until baselines)
      "drift": null,                         # value - expected, unit of value
      "drift_rel": null,                     # (value - expected) / expected [-]
      "cost_per_hour": null,                 # extra fuel cost of the drift, in currency/h
      "currency": "EUR",
      "rule": {"id": 3, "name": "...", "kind": "threshold", "direction": "below",
               "limit": 0.82, "clear_limit": 0.83, "for_seconds": 300.0,
               "clear_for_seconds": 600.0, "after_seconds": null, "flags": null,
               "tags": null},                # null when the rule was deleted since
      "alert": {"id": 12, "status": "firing", "message": "...",
                "fired_at": "...", "resolved_at": null,
                "acknowledged_at": null, "acknowledged_by": null, "note": null},
      "details": {}                          # kind-specific: stale_tags (name -> newest
                                             # reading), flags set, read (drift and CUSUM:
                                             # the baseline result the rule read, e.g.
                                             # {"metric": "drift_rel_eta_1", "value": -0.03}),
                                             # resolved_because (rule deleted, changed,
                                             # disabled)
    }

Timestamps are RFC 3339 in UTC. Numbers are SI, as everywhere in the API.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

from api.alerts.conventions import metric_unit
from api.alerts.models import Alert, AlertRule
from api.plants.models import Plant, Unit

UNIT_PAGE = "/units/{slug}"
"""The dashboard's unit page (``dashboard/pages/unit.py``), below ``public_base_url``."""


def rfc3339(value: dt.datetime | None) -> str | None:
    if value is None:
        return None
    return value.astimezone(dt.UTC).isoformat().replace("+00:00", "Z")


def unit_url(base_url: str, unit_slug: str) -> str:
    return base_url.rstrip("/") + UNIT_PAGE.format(slug=unit_slug)


def alert_payload(
    *,
    event_type: str,
    event_id: str,
    occurred_at: dt.datetime,
    alert: Alert,
    rule: AlertRule | None,
    unit: Unit,
    plant: Plant,
    base_url: str,
) -> dict[str, Any]:
    """The payload of one alert event."""
    resolved = event_type == "alert.resolved"
    value = alert.resolved_value if resolved else alert.value
    return {
        "type": event_type,
        "id": event_id,
        "occurred_at": rfc3339(occurred_at),
        "severity": alert.severity,
        "began_at": rfc3339(alert.began_at),
        "plant": {"slug": plant.slug, "name": plant.name},
        "unit": {
            "slug": unit.slug,
            "name": unit.name,
            "kind": unit.kind,
            "url": unit_url(base_url, unit.slug),
        },
        "metric": alert.metric,
        "value": value,
        "value_unit": metric_unit(unit.kind, alert.metric) if alert.metric else None,
        "expected": alert.expected,
        "drift": alert.drift,
        "drift_rel": alert.drift_rel,
        "cost_per_hour": alert.cost_per_h,
        "currency": plant.currency,
        "rule": None if rule is None else rule_summary(rule),
        "alert": {
            "id": alert.id,
            "status": alert.status,
            "message": alert.message,
            "fired_at": rfc3339(alert.fired_at),
            "resolved_at": rfc3339(alert.resolved_at),
            "acknowledged_at": rfc3339(alert.acknowledged_at),
            "acknowledged_by": alert.acknowledged_by,
            "note": alert.ack_note,
        },
        "details": dict(alert.details or {}),
    }


def rule_summary(rule: AlertRule) -> dict[str, Any]:
    return {
        "id": rule.id,
        "name": rule.name,
        "kind": rule.kind,
        "direction": rule.direction,
        "limit": rule.limit,
        "clear_limit": rule.clear_limit,
        "for_seconds": rule.for_seconds,
        "clear_for_seconds": rule.clear_for_seconds,
        "after_seconds": rule.after_seconds,
        "flags": rule.flag_names,
        "tags": rule.tag_names,
    }
