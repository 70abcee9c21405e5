"""Rules (create, change, delete) and alerts (list, read, acknowledge)."""

from __future__ import annotations

import datetime as dt
from typing import Any

from sqlalchemy import func, or_, select
from sqlalchemy.orm import Session

from api.alerts import lifecycle, rules
from api.alerts.conditions import condition_of
from api.alerts.models import Alert, AlertRule, AlertRuleState, Phase, RuleKind
from api.alerts.payload import unit_url
from api.alerts.rulespec import RuleSpec
from api.alerts.schemas import AlertDetail, AlertEventRead, AlertRead, RuleRead, RuleStateRead
from api.core.db import utcnow
from api.core.problems import Conflict, InvalidInput, NotFound
from api.plants.models import Plant, Tag, Unit, UnitBinding
from api.webhooks.models import WebhookEvent

IDENTITY = ("kind", "metric", "direction", "flag_names", "tag_names", "unit_id")
"""Columns whose change makes a rule a different rule: its open alert is resolved and
its evaluation starts afresh. Other changes (limits, durations, severity) keep both."""
MAX_LIMIT = 1000


# --------------------------------------------------------------------------- rules


def unit_facts(session: Session, unit: Unit) -> rules.UnitFacts:
    plant = session.get(Plant, unit.plant_id)
    assert plant is not None
    bound = session.scalars(
        select(Tag.name)
        .join(UnitBinding, UnitBinding.tag_id == Tag.id)
        .where(UnitBinding.unit_id == unit.id)
    )
    return rules.UnitFacts(unit.slug, unit.kind, frozenset(bound), plant.atmosphere_pa)


def _unit(session: Session, slug: str) -> Unit:
    unit = session.scalars(select(Unit).where(Unit.slug == slug)).one_or_none()
    if unit is None:
        raise InvalidInput(
            f"no unit {slug!r}", errors=[{"field": "unit", "message": f"no unit {slug!r}"}]
        )
    return unit


def resolve_spec(session: Session, spec: RuleSpec, unit: Unit, path: str = "") -> dict[str, Any]:
    try:
        return rules.resolve(spec, unit_facts(session, unit), path=path)
    except ValueError as exc:
        errors = exc.args[0]
        raise InvalidInput(
            f"the rule has {len(errors)} problem(s): " + "; ".join(e["message"] for e in errors),
            errors=errors,
        ) from None


def reset(session: Session, rule: AlertRule, reason: str, *, base_url: str | None = None) -> None:
    """Resolve the rule's open alert (``reason`` recorded) and restart its evaluation."""
    state = session.get(AlertRuleState, rule.id)
    if state is None:
        return
    if state.alert_id is not None:
        alert = session.get(Alert, state.alert_id)
        if alert is not None:
            lifecycle.resolve(
                session, alert, resolved_at=utcnow(), value=None, reason=reason, base_url=base_url
            )
    state.phase, state.since_ms, state.clear_since_ms = Phase.OK.value, None, None
    state.alert_id = None
    if rule.kind == RuleKind.STALE.value:
        state.last_t_ms = None
    # Result rules keep their cursor: a changed rule judges new results only.


def write_rule(
    session: Session,
    rule: AlertRule | None,
    *,
    plant_id: int,
    unit_id: int,
    name: str,
    values: dict[str, Any],
    source: str,
    base_url: str | None = None,
) -> tuple[AlertRule, bool]:
    """Create or update a rule from resolved ``values``; (rule, changed). No commit."""
    wanted = {**values, "unit_id": unit_id, "name": name, "source": source}
    if rule is None:
        rule = AlertRule(plant_id=plant_id, **wanted)
        session.add(rule)
        session.flush()
        session.add(AlertRuleState(rule_id=rule.id, phase=Phase.OK.value))
        session.flush()
        return rule, True
    changed = {k for k, v in wanted.items() if getattr(rule, k) != v}
    if not changed:
        return rule, False
    identity_changed = bool(changed & set(IDENTITY))
    was_enabled = rule.enabled
    for key in changed:
        setattr(rule, key, wanted[key])
    rule.updated_at = utcnow()
    if identity_changed:
        reset(session, rule, "rule changed", base_url=base_url)
    elif was_enabled and not rule.enabled:
        reset(session, rule, "rule disabled", base_url=base_url)
    elif rule.enabled and not was_enabled:
        _restart(session, rule)
    session.flush()
    return rule, True


def _restart(session: Session, rule: AlertRule) -> None:
    """A rule enabled again judges new results only (not what came while it was off)."""
    state = session.get(AlertRuleState, rule.id)
    if state is not None:
        state.phase, state.since_ms, state.clear_since_ms = Phase.OK.value, None, None
        state.last_t_ms = None


def delete_rule_row(session: Session, rule: AlertRule, *, base_url: str | None = None) -> None:
    reset(session, rule, "rule deleted", base_url=base_url)
    session.flush()
    session.delete(rule)
    session.flush()


def get_rule(session: Session, rule_id: int) -> AlertRule:
    rule = session.get(AlertRule, rule_id)
    if rule is None:
        raise NotFound(f"no rule with id {rule_id}")
    return rule


def _own(rule: AlertRule, plant_slug: str, action: str) -> None:
    if rule.source == "file":
        raise Conflict(
            f"rule {rule.name!r} comes from the plant file of {plant_slug!r}; {action} it "
            f"there and apply the file (PATCH enabled works on any rule)",
            errors=[{"field": "name", "message": "owned by the plant file"}],
        )


def create_rule(
    *, session: Session, name: str, spec: RuleSpec, base_url: str | None = None
) -> AlertRule:
    unit = _unit(session, spec.unit)
    values = resolve_spec(session, spec, unit)
    taken = session.scalar(
        select(AlertRule.id).where(AlertRule.plant_id == unit.plant_id, AlertRule.name == name)
    )
    if taken is not None:
        raise Conflict(
            f"the plant of unit {unit.slug!r} already has a rule {name!r} (id {taken})",
            errors=[{"field": "name", "message": "taken"}],
        )
    rule, _ = write_rule(
        session,
        None,
        plant_id=unit.plant_id,
        unit_id=unit.id,
        name=name,
        values=values,
        source="api",
        base_url=base_url,
    )
    session.commit()
    return rule


def replace_rule(
    *, session: Session, rule_id: int, name: str, spec: RuleSpec, base_url: str | None = None
) -> AlertRule:
    rule = get_rule(session, rule_id)
    plant = session.get(Plant, rule.plant_id)
    assert plant is not None
    _own(rule, plant.slug, "change")
    unit = _unit(session, spec.unit)
    if unit.plant_id != rule.plant_id:
        raise InvalidInput(
            f"unit {unit.slug!r} belongs to another plant than rule {rule.name!r}",
            errors=[{"field": "unit", "message": "a rule stays within its plant"}],
        )
    values = resolve_spec(session, spec, unit)
    if name != rule.name and session.scalar(
        select(AlertRule.id).where(AlertRule.plant_id == rule.plant_id, AlertRule.name == name)
    ):
        raise Conflict(
            f"rule name {name!r} is taken", errors=[{"field": "name", "message": "taken"}]
        )
    write_rule(
        session,
        rule,
        plant_id=rule.plant_id,
        unit_id=unit.id,
        name=name,
        values=values,
        source="api",
        base_url=base_url,
    )
    session.commit()
    return rule


def set_enabled(
    *, session: Session, rule_id: int, enabled: bool, base_url: str | None = None
) -> AlertRule:
    rule = get_rule(session, rule_id)
    if rule.enabled != enabled:
        rule.enabled = enabled
        rule.updated_at = utcnow()
        if not enabled:
            reset(session, rule, "rule disabled", base_url=base_url)
        else:
            _restart(session, rule)
    session.commit()
    return rule


def delete_rule(*, session: Session, rule_id: int, base_url: str | None = None) -> None:
    rule = get_rule(session, rule_id)
    plant = session.get(Plant, rule.plant_id)
    assert plant is not None
    _own(rule, plant.slug, "delete")
    delete_rule_row(session, rule, base_url=base_url)
    session.commit()


def list_rules(
    *, session: Session, plant: str | None = None, unit: str | None = None
) -> list[AlertRule]:
    query = select(AlertRule).order_by(AlertRule.plant_id, AlertRule.name)
    if plant is not None:
        query = query.join(Plant, Plant.id == AlertRule.plant_id).where(Plant.slug == plant)
    if unit is not None:
        query = query.join(Unit, Unit.id == AlertRule.unit_id).where(Unit.slug == unit)
    return list(session.scalars(query))


def _ms(value: int | None) -> dt.datetime | None:
    return None if value is None else lifecycle.ms_to_datetime(value)


def rule_read(session: Session, rule: AlertRule) -> RuleRead:
    unit = session.get(Unit, rule.unit_id)
    plant = session.get(Plant, rule.plant_id)
    assert unit is not None and plant is not None
    state = session.get(AlertRuleState, rule.id)
    reads = None if rule.kind == RuleKind.STALE.value else condition_of(rule).source
    return RuleRead(
        id=rule.id,
        name=rule.name,
        plant=plant.slug,
        unit=unit.slug,
        kind=rule.kind,
        metric=rule.metric,
        direction=rule.direction,
        limit=rule.limit,
        clear_limit=rule.clear_limit,
        for_seconds=rule.for_seconds,
        clear_for_seconds=rule.clear_for_seconds,
        after_seconds=rule.after_seconds,
        flags=rule.flag_names,
        tags=rule.tag_names,
        severity=rule.severity,
        enabled=rule.enabled,
        description=rule.description,
        source=rule.source,  # type: ignore[arg-type]
        reads=reads,
        created_at=rule.created_at,
        updated_at=rule.updated_at,
        state=RuleStateRead(
            phase=(state.phase if state else "ok"),  # type: ignore[arg-type]
            since=_ms(state.since_ms) if state else None,
            alert_id=state.alert_id if state else None,
            evaluated_until=_ms(state.last_t_ms) if state else None,
        ),
    )


# --------------------------------------------------------------------------- alerts


def get_alert(session: Session, alert_id: int) -> Alert:
    alert = session.get(Alert, alert_id)
    if alert is None:
        raise NotFound(f"no alert with id {alert_id}")
    return alert


def list_alerts(
    *,
    session: Session,
    plant: str | None = None,
    unit: str | None = None,
    status: str | None = None,
    severity: str | None = None,
    rule: str | None = None,
    acknowledged: bool | None = None,
    start: dt.datetime | None = None,
    end: dt.datetime | None = None,
    limit: int = 100,
    offset: int = 0,
) -> tuple[list[Alert], int]:
    """Alerts newest first. ``start``/``end``: alerts active at some moment of [start,
    end) — began before ``end`` and not resolved before ``start``."""
    query = select(Alert)
    if plant is not None:
        query = query.join(Plant, Plant.id == Alert.plant_id).where(Plant.slug == plant)
    if unit is not None:
        query = query.join(Unit, Unit.id == Alert.unit_id).where(Unit.slug == unit)
    if status is not None:
        query = query.where(Alert.status == status)
    if severity is not None:
        query = query.where(Alert.severity == severity)
    if rule is not None:
        query = query.where(Alert.rule_name == rule)
    if acknowledged is not None:
        query = query.where(
            Alert.acknowledged_at.is_not(None) if acknowledged else Alert.acknowledged_at.is_(None)
        )
    if end is not None:
        query = query.where(Alert.began_at < end)
    if start is not None:
        query = query.where(or_(Alert.resolved_at.is_(None), Alert.resolved_at >= start))
    total = session.scalar(select(func.count()).select_from(query.subquery())) or 0
    page = session.scalars(
        query.order_by(Alert.began_at.desc(), Alert.id.desc()).limit(limit).offset(offset)
    )
    return list(page), int(total)


def alert_read(session: Session, alert: Alert, base_url: str) -> AlertRead:
    unit = session.get(Unit, alert.unit_id)
    plant = session.get(Plant, alert.plant_id)
    assert unit is not None and plant is not None
    return AlertRead(
        id=alert.id,
        status=alert.status,  # type: ignore[arg-type]
        severity=alert.severity,  # type: ignore[arg-type]
        plant=plant.slug,
        unit=unit.slug,
        rule_id=alert.rule_id,
        rule=alert.rule_name,
        kind=alert.kind,
        metric=alert.metric,
        message=alert.message,
        began_at=alert.began_at,
        fired_at=alert.fired_at,
        resolved_at=alert.resolved_at,
        value=alert.value,
        resolved_value=alert.resolved_value,
        expected=alert.expected,
        drift=alert.drift,
        drift_rel=alert.drift_rel,
        cost_per_hour=alert.cost_per_h,
        currency=plant.currency,
        acknowledged_at=alert.acknowledged_at,
        acknowledged_by=alert.acknowledged_by,
        note=alert.ack_note,
        details=dict(alert.details or {}),
        unit_url=unit_url(base_url, unit.slug),
    )


def alert_detail(session: Session, alert: Alert, base_url: str) -> AlertDetail:
    events = session.execute(
        select(WebhookEvent.id, WebhookEvent.type, WebhookEvent.occurred_at)
        .where(WebhookEvent.alert_id == alert.id)
        .order_by(WebhookEvent.created_at, WebhookEvent.occurred_at)
    ).all()
    return AlertDetail(
        **alert_read(session, alert, base_url).model_dump(),
        events=[AlertEventRead(id=e.id, type=e.type, occurred_at=e.occurred_at) for e in events],
    )


def acknowledge(
    *, session: Session, alert_id: int, by: str, note: str, base_url: str | None = None
) -> Alert:
    alert = get_alert(session, alert_id)
    if not note.strip():
        raise InvalidInput(
            "an acknowledgement needs a note", errors=[{"field": "note", "message": "empty"}]
        )
    lifecycle.acknowledge(session, alert, by=by, note=note.strip(), base_url=base_url)
    session.commit()
    return alert
