"""Evaluating a unit's result-driven rules over freshly written results.

Called by the compute worker inside the transaction that writes a chunk of results
(:func:`evaluate_after_results`), so results, alerts and their outbox events commit
together or not at all: a worker killed mid-chunk leaves neither, and the chunk is
computed and evaluated again by the next worker.

Each rule keeps a cursor (``alert_rule_states.last_t_ms``): only intervals after it are
evaluated, in time order. An interval recomputed later (late readings, a recompute)
is not evaluated again: alerts describe what the data said when it first arrived, and
a backfill of older data behind the cursor raises no alerts. A rule evaluated for the
first time (new, or enabled again) starts at the chunk in hand.

The evaluation runs in a savepoint: should it fail, the results still commit and the
error is logged; the rule's cursor stays where it was, so the next chunk of the unit
evaluates the intervals left behind (up to :data:`CATCH_UP_MS` back).
"""

from __future__ import annotations

import logging
from collections import defaultdict
from collections.abc import Iterable

from sqlalchemy import select
from sqlalchemy.orm import Session

from api.alerts import lifecycle
from api.alerts.conditions import RESULT_KINDS, condition_of
from api.alerts.models import Alert, AlertRule, AlertRuleState, Phase, RuleKind
from api.alerts.statemachine import Fire, Resolve, State, step
from api.plants.models import Plant, Unit
from api.results.models import ResultValue
from engine.checks import Flag

log = logging.getLogger("lostwork.alerts")

CATCH_UP_MS = 86_400_000
"""Furthest back before a chunk that intervals not yet evaluated are looked at. [ms]"""


def rule_states(
    session: Session, rules: Iterable[AlertRule], *, lock: bool = True
) -> dict[int, AlertRuleState]:
    """The state rows of ``rules`` (created when missing), locked on PostgreSQL."""
    ids = [r.id for r in rules]
    if not ids:
        return {}
    query = select(AlertRuleState).where(AlertRuleState.rule_id.in_(ids))
    if lock and session.get_bind().dialect.name == "postgresql":
        query = query.with_for_update()
    states = {s.rule_id: s for s in session.scalars(query)}
    for rule_id in ids:
        if rule_id not in states:
            states[rule_id] = AlertRuleState(rule_id=rule_id, phase=Phase.OK.value)
            session.add(states[rule_id])
    return states


def _flag_names(value: float, names: list[str] | None) -> list[str]:
    bits = int(value)
    return [n for n in names or () if bits & int(Flag[n])]


def evaluate_unit_results(
    session: Session, unit_id: int, start_ms: int, end_ms: int, *, base_url: str | None = None
) -> tuple[int, int]:
    """Run the unit's enabled result-driven rules over its results in [start, end).

    Returns (alerts fired, alerts resolved). Does not commit.
    """
    rules = list(
        session.scalars(
            select(AlertRule)
            .where(
                AlertRule.unit_id == unit_id,
                AlertRule.enabled.is_(True),
                AlertRule.kind.in_([k.value for k in RESULT_KINDS]),
            )
            .order_by(AlertRule.id)
        )
    )
    if not rules:
        return 0, 0
    unit = session.get(Unit, unit_id)
    if unit is None:
        return 0, 0
    plant = session.get(Plant, unit.plant_id)
    assert plant is not None
    interval_ms = plant.interval_seconds * 1000
    states = rule_states(session, rules)
    conditions = {r.id: condition_of(r) for r in rules}
    # From the earliest cursor, not from the chunk's start: intervals a failed evaluation
    # left behind are picked up by the next chunk (within CATCH_UP_MS).
    cursors = [s.last_t_ms for s in states.values()]
    lo = start_ms
    if all(c is not None for c in cursors):
        earliest = min(c for c in cursors if c is not None)
        lo = max(min(start_ms, earliest + 1), start_ms - CATCH_UP_MS)
    series: dict[str, list[tuple[int, float | None]]] = defaultdict(list)
    for metric, t_ms, value in session.execute(
        select(ResultValue.metric, ResultValue.t_ms, ResultValue.value)
        .where(
            ResultValue.unit_id == unit_id,
            ResultValue.metric.in_({c.source for c in conditions.values()}),
            ResultValue.t_ms >= lo,
            ResultValue.t_ms < end_ms,
        )
        .order_by(ResultValue.t_ms)
    ):
        series[metric].append((int(t_ms), value))

    fired = resolved = 0
    for rule in rules:
        row = states[rule.id]
        condition = conditions[rule.id]
        state = State(Phase(row.phase), row.since_ms, row.clear_since_ms, row.last_t_ms)
        for t_ms, value in series.get(condition.source, ()):
            if state.last_t_ms is not None and t_ms <= state.last_t_ms:
                continue
            event = step(state, t_ms, value, interval_ms, condition)
            if isinstance(event, Fire):
                details = {}
                if rule.kind == RuleKind.INCONSISTENT.value:
                    details = {"flags": _flag_names(event.value, rule.flag_names)}
                alert = lifecycle.fire(
                    session,
                    rule=rule,
                    unit=unit,
                    plant=plant,
                    began_at=lifecycle.ms_to_datetime(event.began_ms),
                    fired_at=lifecycle.ms_to_datetime(event.at_ms),
                    value=event.value,
                    t_ms=event.t_ms,
                    details=details,
                    base_url=base_url,
                )
                row.alert_id = alert.id
                fired += 1
            elif isinstance(event, Resolve):
                open_alert = session.get(Alert, row.alert_id) if row.alert_id is not None else None
                if open_alert is not None and lifecycle.resolve(
                    session,
                    open_alert,
                    resolved_at=lifecycle.ms_to_datetime(event.at_ms),
                    value=event.value,
                    t_ms=event.t_ms,
                    base_url=base_url,
                ):
                    resolved += 1
                row.alert_id = None
        row.phase = state.phase.value
        row.since_ms, row.clear_since_ms = state.since_ms, state.clear_since_ms
        row.last_t_ms = state.last_t_ms
    session.flush()
    return fired, resolved


def evaluate_after_results(session: Session, unit_id: int, start_ms: int, end_ms: int) -> None:
    """The compute worker's hook: evaluate in a savepoint of its chunk transaction."""
    try:
        with session.begin_nested():
            fired, resolved = evaluate_unit_results(session, unit_id, start_ms, end_ms)
    except Exception:
        log.exception(
            "alert rules of unit %s over [%s, %s) failed; results kept", unit_id, start_ms, end_ms
        )
        return
    if fired or resolved:
        log.info("unit %s: %s alert(s) fired, %s resolved", unit_id, fired, resolved)
