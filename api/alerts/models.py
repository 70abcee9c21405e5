"""Alert rules, their evaluation state, and alerts."""

from __future__ import annotations

import datetime as dt
import enum
from typing import Any

from sqlalchemy import (
    JSON,
    BigInteger,
    Boolean,
    Float,
    ForeignKey,
    Index,
    Integer,
    String,
    Text,
    UniqueConstraint,
)
from sqlalchemy.orm import Mapped, mapped_column

from api.core.db import Base, BigIntPK, UTCDateTime, utcnow


class RuleKind(enum.StrEnum):
    THRESHOLD = "threshold"
    """A result metric above or below a limit."""
    DRIFT = "drift"
    """The relative drift from baseline ``drift_rel_<metric>`` above or below a limit."""
    CUSUM = "cusum"
    """The baseline's tabular CUSUM alarm ``cusum_alarm_<metric>`` raised."""
    STALE = "stale"
    """No reading from one of the unit's tags for longer than ``after_seconds``."""
    INCONSISTENT = "inconsistent"
    """One of the named engine consistency flags set on the unit's results."""


class Severity(enum.StrEnum):
    INFO = "info"
    WARNING = "warning"
    CRITICAL = "critical"


class AlertStatus(enum.StrEnum):
    FIRING = "firing"
    RESOLVED = "resolved"


class Phase(enum.StrEnum):
    """Where a rule's state machine stands (see :mod:`api.alerts.statemachine`)."""

    OK = "ok"
    PENDING = "pending"
    """The condition holds but not yet for the rule's minimum duration."""
    FIRING = "firing"
    CLEARING = "clearing"
    """Firing, and the clear condition holds but not yet for the clear duration."""


class AlertRule(Base):
    """A condition on one unit that raises an alert.

    ``source`` says who owns the rule: ``file`` rules are created, changed and deleted by
    applying the plant file; ``api`` rules by the rules API and CLI only.
    """

    __tablename__ = "alert_rules"
    __table_args__ = (UniqueConstraint("plant_id", "name"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    plant_id: Mapped[int] = mapped_column(ForeignKey("plants.id", ondelete="CASCADE"), index=True)
    unit_id: Mapped[int] = mapped_column(ForeignKey("units.id", ondelete="CASCADE"), index=True)
    name: Mapped[str] = mapped_column(String(64))
    kind: Mapped[str] = mapped_column(String(16))
    metric: Mapped[str | None] = mapped_column(String(64))
    """The metric the rule is about (threshold: read as is; drift and CUSUM: the base
    metric whose ``drift_rel_``/``cusum_alarm_`` result is read; stale, inconsistent:
    none)."""
    direction: Mapped[str | None] = mapped_column(String(8))
    """``above``/``below`` (threshold, drift); ``upper``/``lower``/``either`` (CUSUM)."""
    limit: Mapped[float | None] = mapped_column(Float)
    """Firing limit in the SI unit of the metric read (drift: a fraction)."""
    clear_limit: Mapped[float | None] = mapped_column(Float)
    """Clear limit (hysteresis); on the safe side of ``limit``."""
    for_seconds: Mapped[float] = mapped_column(Float, default=0.0)
    clear_for_seconds: Mapped[float] = mapped_column(Float, default=0.0)
    after_seconds: Mapped[float | None] = mapped_column(Float)
    """Stale rules: age of the newest reading beyond which a tag is stale. [s]"""
    flag_names: Mapped[list[str] | None] = mapped_column(JSON)
    """Inconsistent rules: names of :class:`engine.checks.Flag` bits watched."""
    tag_names: Mapped[list[str] | None] = mapped_column(JSON)
    """Stale rules: tags watched; None = the tags bound to the unit's required roles."""
    severity: Mapped[str] = mapped_column(String(16), default=Severity.WARNING.value)
    enabled: Mapped[bool] = mapped_column(Boolean, default=True)
    description: Mapped[str | None] = mapped_column(String(500))
    source: Mapped[str] = mapped_column(String(8), default="api")
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)
    updated_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)


class AlertRuleState(Base):
    """Where a rule's evaluation stands; one row per rule, written by the evaluators only.

    Result rules advance ``last_t_ms`` over interval starts (data time); stale rules use
    wall-clock milliseconds. Kept apart from the rule so that editing a rule and
    evaluating it never write the same row.
    """

    __tablename__ = "alert_rule_states"

    rule_id: Mapped[int] = mapped_column(
        ForeignKey("alert_rules.id", ondelete="CASCADE"), primary_key=True
    )
    phase: Mapped[str] = mapped_column(String(16), default=Phase.OK.value)
    since_ms: Mapped[int | None] = mapped_column(BigInteger)
    """When the firing condition began (pending, firing, clearing)."""
    clear_since_ms: Mapped[int | None] = mapped_column(BigInteger)
    """When the clear condition began (clearing)."""
    last_t_ms: Mapped[int | None] = mapped_column(BigInteger)
    """Last interval start evaluated: later results only are looked at."""
    alert_id: Mapped[int | None] = mapped_column(
        ForeignKey("alerts.id", ondelete="SET NULL"), index=True
    )
    updated_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)


class Alert(Base):
    """One episode of a rule's condition: fired once, resolved once, acknowledged once."""

    __tablename__ = "alerts"
    __table_args__ = (
        Index("ix_alerts_unit_began", "unit_id", "began_at"),
        Index("ix_alerts_status_began", "status", "began_at"),
    )

    id: Mapped[int] = mapped_column(BigIntPK, primary_key=True)
    rule_id: Mapped[int | None] = mapped_column(
        ForeignKey("alert_rules.id", ondelete="SET NULL"), index=True
    )
    plant_id: Mapped[int] = mapped_column(ForeignKey("plants.id", ondelete="CASCADE"), index=True)
    unit_id: Mapped[int] = mapped_column(ForeignKey("units.id", ondelete="CASCADE"))
    rule_name: Mapped[str] = mapped_column(String(64))
    """The rule's name when the alert fired (kept when the rule is deleted)."""
    kind: Mapped[str] = mapped_column(String(16))
    metric: Mapped[str | None] = mapped_column(String(64))
    severity: Mapped[str] = mapped_column(String(16))
    status: Mapped[str] = mapped_column(String(16), default=AlertStatus.FIRING.value)
    message: Mapped[str] = mapped_column(String(500))
    began_at: Mapped[dt.datetime] = mapped_column(UTCDateTime())
    """When the condition began (start of the first interval in breach)."""
    fired_at: Mapped[dt.datetime] = mapped_column(UTCDateTime())
    """When the condition had held for the rule's minimum duration."""
    resolved_at: Mapped[dt.datetime | None] = mapped_column(UTCDateTime())
    value: Mapped[float | None] = mapped_column(Float)
    """The value read when the alert fired (SI)."""
    resolved_value: Mapped[float | None] = mapped_column(Float)
    expected: Mapped[float | None] = mapped_column(Float)
    drift: Mapped[float | None] = mapped_column(Float)
    drift_rel: Mapped[float | None] = mapped_column(Float)
    cost_per_h: Mapped[float | None] = mapped_column(Float)
    details: Mapped[dict[str, Any]] = mapped_column(JSON, default=dict)
    acknowledged_at: Mapped[dt.datetime | None] = mapped_column(UTCDateTime())
    acknowledged_by: Mapped[str | None] = mapped_column(String(200))
    """Name of the API key that acknowledged."""
    ack_note: Mapped[str | None] = mapped_column(Text)
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)
