"""What a rule reads and when its value is in breach or clear (result-driven kinds)."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from api.alerts import conventions
from api.alerts.models import AlertRule, RuleKind
from api.pipeline.quality import FLAGS_METRIC
from engine.checks import Flag

RESULT_KINDS = (RuleKind.THRESHOLD, RuleKind.DRIFT, RuleKind.CUSUM, RuleKind.INCONSISTENT)
"""Kinds evaluated when results are written (stale rules run on a timer)."""


@dataclass(frozen=True)
class Condition:
    """``breach`` and ``cleared`` never both hold; between them lies the hysteresis band,
    where a firing alert stays firing and a quiet rule stays quiet."""

    source: str
    """Result metric read."""
    breach: Callable[[float], bool]
    cleared: Callable[[float], bool]
    for_ms: int
    clear_for_ms: int


def flag_mask(names: list[str] | None) -> int:
    mask = 0
    for name in names or ():
        mask |= int(Flag[name])
    return mask


def condition_of(rule: AlertRule) -> Condition:
    """The condition of a result-driven rule."""
    kind = RuleKind(rule.kind)
    for_ms = round(rule.for_seconds * 1000)
    clear_ms = round(rule.clear_for_seconds * 1000)
    if kind in (RuleKind.THRESHOLD, RuleKind.DRIFT):
        assert rule.metric is not None and rule.limit is not None
        source = (
            rule.metric if kind is RuleKind.THRESHOLD else conventions.drift_rel_metric(rule.metric)
        )
        limit = rule.limit
        clear = rule.clear_limit if rule.clear_limit is not None else limit
        if rule.direction == "above":
            return Condition(source, lambda v: v > limit, lambda v: v <= clear, for_ms, clear_ms)
        return Condition(source, lambda v: v < limit, lambda v: v >= clear, for_ms, clear_ms)
    if kind is RuleKind.CUSUM:
        assert rule.metric is not None
        source = conventions.cusum_alarm_metric(rule.metric)
        side = rule.direction or "either"
        if side == "upper":
            raised: Callable[[float], bool] = lambda v: v > 0  # noqa: E731
        elif side == "lower":
            raised = lambda v: v < 0  # noqa: E731
        else:
            raised = lambda v: v != 0  # noqa: E731
        return Condition(source, raised, lambda v: not raised(v), for_ms, clear_ms)
    if kind is RuleKind.INCONSISTENT:
        mask = flag_mask(rule.flag_names)
        return Condition(
            FLAGS_METRIC,
            lambda v: (int(v) & mask) != 0,
            lambda v: (int(v) & mask) == 0,
            for_ms,
            clear_ms,
        )
    raise ValueError(f"a {rule.kind} rule is not evaluated on results")
