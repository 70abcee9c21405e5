"""Rule and alert payloads of the API."""

from __future__ import annotations

import datetime as dt
from typing import Any, Literal

from pydantic import BaseModel, Field

from api.alerts.rulespec import RuleName, RuleSpec


class RuleCreate(RuleSpec):
    """A rule as sent to ``POST /rules`` and ``PUT /rules/{id}``: the plant-file form
    plus its name."""

    name: RuleName


class RulePatch(BaseModel):
    enabled: bool


class RuleStateRead(BaseModel):
    phase: Literal["ok", "pending", "firing", "clearing"]
    since: dt.datetime | None
    """When the firing condition began (pending, firing, clearing)."""
    alert_id: int | None
    evaluated_until: dt.datetime | None
    """Start of the last interval evaluated (result rules) or the last check (stale)."""


class RuleRead(BaseModel):
    id: int
    name: str
    plant: str
    unit: str
    kind: str
    metric: str | None
    direction: str | None
    limit: float | None
    """Firing limit, SI (drift: a fraction)."""
    clear_limit: float | None
    for_seconds: float
    clear_for_seconds: float
    after_seconds: float | None
    flags: list[str] | None
    tags: list[str] | None
    severity: str
    enabled: bool
    description: str | None
    source: Literal["file", "api"]
    """``file``: owned by the plant file (change it there); ``api``: by this API."""
    reads: str | None
    """The result metric the rule evaluates (None for stale rules)."""
    created_at: dt.datetime
    updated_at: dt.datetime
    state: RuleStateRead


class RuleList(BaseModel):
    rules: list[RuleRead]


class AlertRead(BaseModel):
    id: int
    status: Literal["firing", "resolved"]
    severity: Literal["info", "warning", "critical"]
    plant: str
    unit: str
    rule_id: int | None
    """None once the rule has been deleted (``rule`` keeps its name)."""
    rule: str
    kind: str
    metric: str | None
    message: str
    began_at: dt.datetime
    fired_at: dt.datetime
    resolved_at: dt.datetime | None
    value: float | None
    resolved_value: float | None
    expected: float | None
    drift: float | None
    drift_rel: float | None
    cost_per_hour: float | None
    currency: str | None
    acknowledged_at: dt.datetime | None
    acknowledged_by: str | None
    note: str | None
    details: dict[str, Any]
    unit_url: str
    """The unit's dashboard page."""


class AlertEventRead(BaseModel):
    id: str
    type: str
    occurred_at: dt.datetime


class AlertDetail(AlertRead):
    events: list[AlertEventRead]
    """Its webhook events, oldest first: the alert's history."""


class AlertList(BaseModel):
    alerts: list[AlertRead]
    total: int
    """Alerts matching the filters (the page holds at most ``limit``)."""


class Acknowledge(BaseModel):
    note: str = Field(min_length=1, max_length=4000, examples=["Soot blowers run; watching."])
