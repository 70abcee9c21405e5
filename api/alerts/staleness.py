"""Data-staleness rules, evaluated on a timer (wall clock), not on results.

A tag is stale when its newest reading is older than the rule's ``after``. Only tags
that have reported at least once are watched: a freshly configured plant whose
historian is not connected yet raises nothing. The condition began when the first of the
stale tags became stale (its newest reading + ``after``); the alert fires once the
condition has held ``for`` and resolves once every watched tag is fresh again and has
stayed so for ``clear_for`` (checked at each tick).

On PostgreSQL the rule states are locked ``FOR UPDATE SKIP LOCKED``, so that several
server processes running the timer never evaluate one rule twice at the same moment.
"""

from __future__ import annotations

import datetime as dt

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from api.alerts import lifecycle
from api.alerts.evaluate import rule_states
from api.alerts.models import Alert, AlertRule, AlertRuleState, Phase, RuleKind
from api.core.db import lock_for_write, utcnow
from api.plants.models import Plant, Tag, Unit, UnitBinding
from api.readings.models import Reading
from engine.catalogue import all_kinds


def required_tags(session: Session, unit: Unit) -> dict[int, str]:
    """tag_id -> name of the tags bound to the unit's required roles (a role of an
    "at least one of" group counts as required when bound)."""
    kind = all_kinds().get(unit.kind)
    alternatives = {name for group in (kind.alternatives if kind else ()) for name in group}
    out: dict[int, str] = {}
    rows = session.execute(
        select(UnitBinding.role, Tag.id, Tag.name)
        .join(Tag, Tag.id == UnitBinding.tag_id)
        .where(UnitBinding.unit_id == unit.id)
    ).all()
    for role_name, tag_id, tag_name in rows:
        role = kind.role(role_name) if kind else None
        if role is None or role.required or role_name in alternatives:
            out[tag_id] = tag_name
    return out


def watched_tags(session: Session, rule: AlertRule, unit: Unit) -> dict[int, str]:
    if rule.tag_names:
        return dict(
            session.execute(
                select(Tag.id, Tag.name).where(
                    Tag.plant_id == rule.plant_id, Tag.name.in_(rule.tag_names)
                )
            ).all()
        )
    return required_tags(session, unit)


def newest_readings(session: Session, tag_ids: list[int]) -> dict[int, int]:
    """tag_id -> t_ms of its newest reading (tags without any are absent)."""
    if not tag_ids:
        return {}
    rows = session.execute(
        select(Reading.tag_id, func.max(Reading.t_ms))
        .where(Reading.tag_id.in_(tag_ids))
        .group_by(Reading.tag_id)
    ).all()
    return {int(tag): int(t) for tag, t in rows if t is not None}


def evaluate_staleness(
    session: Session, *, now: dt.datetime | None = None, base_url: str | None = None
) -> tuple[int, int]:
    """Evaluate every enabled stale rule at ``now``; commits. Returns (fired, resolved)."""
    now = now or utcnow()
    now_ms = int(now.timestamp() * 1000)
    postgres = session.get_bind().dialect.name == "postgresql"
    stale_kind = AlertRule.kind == RuleKind.STALE.value
    if not session.scalar(select(func.count()).where(stale_kind, AlertRule.enabled.is_(True))):
        session.rollback()
        return 0, 0  # no stale rule: do not take SQLite's write lock every tick
    if not postgres:
        lock_for_write(session)
    rules = list(
        session.scalars(
            select(AlertRule)
            .where(AlertRule.kind == RuleKind.STALE.value, AlertRule.enabled.is_(True))
            .order_by(AlertRule.id)
        )
    )
    if not rules:
        session.commit()
        return 0, 0
    rule_states(session, rules, lock=False)  # create missing rows
    session.commit()
    if not postgres:
        lock_for_write(session)
    query = select(AlertRuleState).where(AlertRuleState.rule_id.in_([r.id for r in rules]))
    if postgres:
        query = query.with_for_update(skip_locked=True)
    states = {s.rule_id: s for s in session.scalars(query)}
    fired = resolved = 0
    for rule in rules:
        row = states.get(rule.id)
        if row is None:
            continue  # another process is evaluating it right now
        unit = session.get(Unit, rule.unit_id)
        plant = session.get(Plant, rule.plant_id)
        if unit is None or plant is None:
            continue
        tags = watched_tags(session, rule, unit)
        newest = newest_readings(session, list(tags))
        after_ms = round((rule.after_seconds or 0) * 1000)
        stale = {tid: t for tid, t in newest.items() if now_ms - t > after_ms}
        phase = Phase(row.phase)
        if phase in (Phase.OK, Phase.PENDING):
            if not stale:
                row.phase, row.since_ms = Phase.OK.value, None
            else:
                since = min(t + after_ms for t in stale.values())
                row.phase, row.since_ms = Phase.PENDING.value, since
                if now_ms - since >= rule.for_seconds * 1000:
                    details = {
                        "stale_tags": {
                            tags[tid]: lifecycle.ms_to_datetime(t)
                            .isoformat()
                            .replace("+00:00", "Z")
                            for tid, t in sorted(stale.items(), key=lambda kv: tags[kv[0]])
                        }
                    }
                    alert = lifecycle.fire(
                        session,
                        rule=rule,
                        unit=unit,
                        plant=plant,
                        began_at=lifecycle.ms_to_datetime(since),
                        fired_at=now,
                        value=(now_ms - min(stale.values())) / 1000.0,
                        details=details,
                        base_url=base_url,
                    )
                    row.phase, row.alert_id = Phase.FIRING.value, alert.id
                    fired += 1
        else:
            if stale or not newest:
                row.phase, row.clear_since_ms = Phase.FIRING.value, None
            else:
                if phase is Phase.FIRING or row.clear_since_ms is None:
                    row.phase, row.clear_since_ms = Phase.CLEARING.value, now_ms
                if now_ms - row.clear_since_ms >= rule.clear_for_seconds * 1000:
                    open_alert = session.get(Alert, row.alert_id) if row.alert_id else None
                    if open_alert is not None and lifecycle.resolve(
                        session, open_alert, resolved_at=now, value=None, base_url=base_url
                    ):
                        resolved += 1
                    row.phase, row.since_ms, row.clear_since_ms = Phase.OK.value, None, None
                    row.alert_id = None
        row.last_t_ms = now_ms
        row.updated_at = now
    session.commit()
    return fired, resolved
