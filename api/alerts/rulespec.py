"""The shape of a rule, as written in a plant file's ``rules:`` section and sent to the
rules API. Only pydantic here: the plant-file schema imports it.

Plant file (format ``lostwork-plant/1``)::

    rules:
      boiler-1-efficiency-low:        # name: unique per plant
        unit: boiler-1
        kind: threshold               # threshold | drift | cusum | stale | inconsistent
        metric: eta_1                 # any result metric of the unit
        below: 0.82                   # or above:; a number in the metric's SI unit,
                                      # or "<number> <unit>" ("480 degC", "82 %")
        clear_at: 0.83                # hysteresis: clears only at or beyond this
        for: 5 min                    # condition must hold this long before firing
        clear_for: 10 min             # clear condition must hold this long to resolve
        severity: warning             # info | warning | critical
      boiler-1-drifting:
        unit: boiler-1
        kind: drift                   # reads drift_rel_<metric> (baselines)
        metric: eta_1
        below: -2 %                   # relative drift, a fraction or "<n> %"
        for: 30 min
      boiler-1-cusum:
        unit: boiler-1
        kind: cusum                   # reads cusum_alarm_<metric>: +1 upper, -1 lower
        metric: eta_1
        side: lower                   # upper | lower | either (default)
        clear_for: 1 h                # default 1 h: an alarm is a single interval
      boiler-1-silent:
        unit: boiler-1
        kind: stale                   # evaluated on a timer, not on results
        after: 15 min                 # a watched tag without a reading this long
        tags: [FW-FLOW]               # default: the tags of the unit's required roles
      boiler-1-physics:
        unit: boiler-1
        kind: inconsistent            # the engine's consistency flags
        flags: [NEGATIVE_ENTROPY_GENERATION, ABOVE_CARNOT]   # default: all but
                                      # INPUT_OUT_OF_RANGE
        severity: critical
"""

from __future__ import annotations

from typing import Annotated, Literal

from pydantic import BaseModel, ConfigDict, Field, StringConstraints

RULE_NAME_PATTERN = r"^[a-z0-9][a-z0-9-]{0,63}$"

RuleName = Annotated[str, StringConstraints(pattern=RULE_NAME_PATTERN)]
Quantity = float | str
"""A number (SI unit of the field; seconds for durations) or ``"<number> <unit>"``."""


class RuleSpec(BaseModel):
    """One rule. Which fields apply depends on ``kind`` (checked when resolved)."""

    model_config = ConfigDict(extra="forbid", populate_by_name=True)

    unit: Annotated[str, StringConstraints(pattern=r"^[a-z0-9][a-z0-9-]{0,63}$")]
    kind: Literal["threshold", "drift", "cusum", "stale", "inconsistent"]
    metric: str | None = Field(default=None, max_length=64)
    """threshold: the result metric; drift, cusum: the metric the baseline is for."""
    above: Quantity | None = None
    """threshold, drift: fire when the value rises above this."""
    below: Quantity | None = None
    """threshold, drift: fire when the value falls below this."""
    clear_at: Quantity | None = None
    """threshold, drift: resolve only once the value is back at or beyond this
    (default: the firing limit)."""
    side: Literal["upper", "lower", "either"] | None = None
    """cusum: which alarm counts (default either)."""
    flags: list[str] | None = None
    """inconsistent: names of engine consistency flags."""
    tags: list[str] | None = None
    """stale: tags watched (default the tags bound to the unit's required roles)."""
    after: Quantity | None = None
    """stale: age of a tag's newest reading beyond which it is stale (number: s)."""
    for_: Quantity = Field(default=0, alias="for")
    """Minimum duration of the condition before the alert fires (number: s)."""
    clear_for: Quantity | None = None
    """Duration the clear condition must hold before the alert resolves (number: s;
    default 0, for cusum 1 h)."""
    severity: Literal["info", "warning", "critical"] = "warning"
    enabled: bool = True
    description: str | None = Field(default=None, max_length=500)
