"""Alert lifecycle: fire, resolve, acknowledge — each writing its webhook event to the
outbox in the caller's transaction (nothing here commits)."""

from __future__ import annotations

import datetime as dt
import math
from typing import Any

from sqlalchemy import select, update
from sqlalchemy.orm import Session

from api.alerts import conventions
from api.alerts.models import Alert, AlertRule, AlertStatus, RuleKind
from api.alerts.payload import alert_payload
from api.core.db import utcnow
from api.core.problems import Conflict
from api.plants.models import Plant, Unit
from api.results.models import ResultValue
from api.webhooks.models import EventType
from api.webhooks.outbox import EventScope, emit


def ms_to_datetime(t_ms: int) -> dt.datetime:
    return dt.datetime.fromtimestamp(t_ms / 1000.0, dt.UTC)


def _base_url(base_url: str | None) -> str:
    if base_url is not None:
        return base_url
    from api.core.config import get_settings

    return get_settings().public_base_url


def _duration_text(seconds: float) -> str:
    if seconds % 3600 == 0 and seconds >= 3600:
        return f"{seconds / 3600:g} h"
    if seconds % 60 == 0 and seconds >= 60:
        return f"{seconds / 60:g} min"
    return f"{seconds:g} s"


def describe(rule: AlertRule, unit: Unit, value: float | None, details: dict[str, Any]) -> str:
    """One line for people: what is wrong, on which unit, against which limit."""
    kind = RuleKind(rule.kind)
    held = f" for {_duration_text(rule.for_seconds)}" if rule.for_seconds else ""
    shown = "n/a" if value is None else f"{value:.6g}"
    if kind is RuleKind.THRESHOLD:
        unit_text = conventions.metric_unit(unit.kind, rule.metric or "") or ""
        unit_text = "" if unit_text in ("", "1") else f" {unit_text}"
        return (
            f"{unit.name}: {rule.metric} = {shown}{unit_text}, {rule.direction} "
            f"{rule.limit:.6g}{unit_text}{held}"
        )
    if kind is RuleKind.DRIFT:
        pct = "n/a" if value is None else f"{value * 100:+.2f} %"
        return (
            f"{unit.name}: {rule.metric} drifted {pct} from baseline, {rule.direction} "
            f"{(rule.limit or 0) * 100:+.2f} %{held}"
        )
    if kind is RuleKind.CUSUM:
        side = {1: "upward", -1: "downward"}.get(int(value or 0), "")
        return f"{unit.name}: CUSUM alarm on {rule.metric} ({side} shift){held}"
    if kind is RuleKind.INCONSISTENT:
        names = ", ".join(details.get("flags", [])) or "flags"
        return f"{unit.name}: thermodynamically inconsistent results ({names}){held}"
    tags = ", ".join(details.get("stale_tags", {})) or "tags"
    return (
        f"{unit.name}: no readings from {tags} for more than "
        f"{_duration_text(rule.after_seconds or 0)}"
    )


def _baseline_values(session: Session, unit_id: int, metric: str | None, t_ms: int) -> dict:
    """The value of ``metric`` itself, its expected / drift / drift_rel, and the unit's
    drift cost at ``t_ms`` (None where not stored)."""
    names = {"cost_per_h": conventions.DRIFT_COST_METRIC}
    if metric:
        names.update(
            actual=metric,
            expected=conventions.expected_metric(metric),
            drift=conventions.drift_metric(metric),
            drift_rel=conventions.drift_rel_metric(metric),
        )
    rows = dict(
        session.execute(
            select(ResultValue.metric, ResultValue.value).where(
                ResultValue.unit_id == unit_id,
                ResultValue.t_ms == t_ms,
                ResultValue.metric.in_(list(names.values())),
            )
        ).all()
    )
    out = {}
    for key, name in names.items():
        value = rows.get(name)
        out[key] = None if value is None or math.isnan(value) else float(value)
    return out


def _emit(
    session: Session,
    event_type: EventType,
    alert: Alert,
    rule: AlertRule | None,
    unit: Unit,
    plant: Plant,
    occurred_at: dt.datetime,
    base_url: str | None,
) -> None:
    url = _base_url(base_url)
    emit(
        session,
        scope=EventScope(
            event_type=event_type.value,
            plant=plant.slug,
            unit=unit.slug,
            severity=alert.severity,
        ),
        build=lambda event_id: alert_payload(
            event_type=event_type.value,
            event_id=event_id,
            occurred_at=occurred_at,
            alert=alert,
            rule=rule,
            unit=unit,
            plant=plant,
            base_url=url,
        ),
        ordering_key=f"unit:{unit.id}",
        occurred_at=occurred_at,
        alert_id=alert.id,
    )


def _derived_source(kind: str, metric: str | None) -> str | None:
    """The baseline result a drift or CUSUM rule reads; None for other kinds."""
    if metric is None:
        return None
    if kind == RuleKind.DRIFT.value:
        return conventions.drift_rel_metric(metric)
    if kind == RuleKind.CUSUM.value:
        return conventions.cusum_alarm_metric(metric)
    return None


def fire(
    session: Session,
    *,
    rule: AlertRule,
    unit: Unit,
    plant: Plant,
    began_at: dt.datetime,
    fired_at: dt.datetime,
    value: float | None,
    t_ms: int | None = None,
    details: dict[str, Any] | None = None,
    base_url: str | None = None,
) -> Alert:
    """A new firing alert for ``rule`` and its ``alert.fired`` event.

    ``value`` is what the rule read. For drift and CUSUM rules that is a baseline result
    (``drift_rel_M``, ``cusum_alarm_M``): it goes to ``details["read"]``, and the alert's
    value is the metric M itself at that interval, beside its expected value and drift.
    """
    details = dict(details or {})
    extra = _baseline_values(session, unit.id, rule.metric, t_ms) if t_ms is not None else {}
    reading = value
    source = _derived_source(rule.kind, rule.metric)
    if source is not None:
        details["read"] = {"metric": source, "value": reading}
        value = extra.get("actual")
    alert = Alert(
        rule_id=rule.id,
        plant_id=plant.id,
        unit_id=unit.id,
        rule_name=rule.name,
        kind=rule.kind,
        metric=rule.metric,
        severity=rule.severity,
        status=AlertStatus.FIRING.value,
        message=describe(rule, unit, reading, details)[:500],
        began_at=began_at,
        fired_at=fired_at,
        value=value,
        expected=extra.get("expected"),
        drift=extra.get("drift"),
        drift_rel=extra.get("drift_rel"),
        cost_per_h=extra.get("cost_per_h"),
        details=details,
        created_at=utcnow(),
    )
    session.add(alert)
    session.flush()
    _emit(session, EventType.ALERT_FIRED, alert, rule, unit, plant, fired_at, base_url)
    return alert


def resolve(
    session: Session,
    alert: Alert,
    *,
    resolved_at: dt.datetime,
    value: float | None,
    reason: str | None = None,
    t_ms: int | None = None,
    base_url: str | None = None,
) -> bool:
    """Resolve a firing alert and queue its ``alert.resolved`` event.

    ``value`` is what the rule read at ``t_ms`` (for drift and CUSUM rules kept in
    ``details["read_at_resolve"]``, the metric itself becoming ``resolved_value``).
    A conditional update: of two transactions resolving the same alert (the worker and a
    rule being deleted), one resolves it and queues the event; False for the other.
    """
    details = dict(alert.details or {})
    if reason:
        details["resolved_because"] = reason
    source = _derived_source(alert.kind, alert.metric)
    if source is not None and t_ms is not None:
        details["read_at_resolve"] = {"metric": source, "value": value}
        value = _baseline_values(session, alert.unit_id, alert.metric, t_ms).get("actual")
    done = session.execute(
        update(Alert)
        .where(Alert.id == alert.id, Alert.status == AlertStatus.FIRING.value)
        .values(
            status=AlertStatus.RESOLVED.value,
            resolved_at=resolved_at,
            resolved_value=value,
            details=details,
        )
        .execution_options(synchronize_session=False)
    )
    if done.rowcount != 1:  # type: ignore[attr-defined]
        return False
    session.refresh(alert)
    unit, plant, rule = _context(session, alert)
    _emit(session, EventType.ALERT_RESOLVED, alert, rule, unit, plant, resolved_at, base_url)
    return True


def acknowledge(
    session: Session, alert: Alert, *, by: str, note: str, base_url: str | None = None
) -> Alert:
    """Record who acknowledged and why; queue ``alert.acknowledged``. Once per alert
    (a conditional update, so two people acknowledging at once cannot both succeed)."""
    now = utcnow()
    done = session.execute(
        update(Alert)
        .where(Alert.id == alert.id, Alert.acknowledged_at.is_(None))
        .values(acknowledged_at=now, acknowledged_by=by, ack_note=note)
        .execution_options(synchronize_session=False)
    )
    session.refresh(alert)
    if done.rowcount != 1:  # type: ignore[attr-defined]
        raise Conflict(
            f"alert {alert.id} was already acknowledged by {alert.acknowledged_by!r} "
            f"at {alert.acknowledged_at.isoformat() if alert.acknowledged_at else '?'}",
            errors=[{"field": "note", "message": "an alert is acknowledged once"}],
        )
    unit, plant, rule = _context(session, alert)
    _emit(session, EventType.ALERT_ACKNOWLEDGED, alert, rule, unit, plant, now, base_url)
    return alert


def _context(session: Session, alert: Alert) -> tuple[Unit, Plant, AlertRule | None]:
    unit = session.get(Unit, alert.unit_id)
    plant = session.get(Plant, alert.plant_id)
    assert unit is not None and plant is not None
    rule = session.get(AlertRule, alert.rule_id) if alert.rule_id is not None else None
    return unit, plant, rule
