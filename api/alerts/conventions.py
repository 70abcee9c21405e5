"""Names of the result metrics that rules read, beyond a unit kind's own results.

The baselines stage (issue 5) stores, per unit and interval, for a metric ``M`` with an
active baseline:

=========================  =====================================================  ========
``expected_M``             the baseline's expected value                          unit of M
``drift_M``                actual − expected                                      unit of M
``drift_rel_M``            (actual − expected) / expected; read by drift rules    [-]
``cusum_alarm_M``          +1 upper alarm, −1 lower alarm, 0 none, in that        [-]
                           interval; read by CUSUM rules
``drift_cost_per_h``       extra fuel cost of the unit's drift                    currency/h
=========================  =====================================================  ========

Rules and alert payloads look these up by name; an interval without them simply has no
value (a drift rule then never fires, and ``expected``/``drift``/``cost_per_hour`` are
null in the payload). A later stage may also declare them through
:func:`api.results.metrics.register_metric_provider`; declared names win.
"""

from __future__ import annotations

from api.results.metrics import unit_metrics
from engine.catalogue import all_kinds

EXPECTED = "expected_"
DRIFT = "drift_"
DRIFT_REL = "drift_rel_"
CUSUM_ALARM = "cusum_alarm_"
DRIFT_COST_METRIC = "drift_cost_per_h"

_DERIVED_UNITS = {
    EXPECTED: None,  # the base metric's unit
    "expected_lower_": None,
    "expected_upper_": None,
    DRIFT_REL: "1",
    CUSUM_ALARM: "1",
    "cusum_upper_": "1",
    "cusum_lower_": "1",
    DRIFT: None,
}
"""Prefixes of per-metric baseline results and their unit (None: the base metric's)."""
_UNIT_METRICS = {DRIFT_COST_METRIC: "", "steady": "1", "headroom_w": "W", "headroom_cost_per_h": ""}
"""Per-unit baseline results ("": a currency, numbers only)."""


def drift_rel_metric(metric: str) -> str:
    return DRIFT_REL + metric


def cusum_alarm_metric(metric: str) -> str:
    return CUSUM_ALARM + metric


def expected_metric(metric: str) -> str:
    return EXPECTED + metric


def drift_metric(metric: str) -> str:
    return DRIFT + metric


def base_metrics(kind: str) -> dict[str, str]:
    """Metric -> SI unit of what a unit of ``kind`` computes itself (drift and CUSUM rules
    are about these)."""
    entry = all_kinds().get(kind)
    return {c.name: c.unit for c in entry.results} if entry else {}


def metric_unit(kind: str, metric: str) -> str | None:
    """The SI unit of ``metric`` for a unit of ``kind`` ("" for a currency); None when the
    metric is unknown."""
    declared = unit_metrics(kind)
    if metric in declared:
        return declared[metric].unit
    if metric in _UNIT_METRICS:
        return _UNIT_METRICS[metric]
    base = base_metrics(kind)
    # Longest prefix first: drift_rel_ before drift_, expected_lower_ before expected_.
    for prefix in sorted(_DERIVED_UNITS, key=len, reverse=True):
        if metric.startswith(prefix) and metric[len(prefix) :] in base:
            unit = _DERIVED_UNITS[prefix]
            return base[metric[len(prefix) :]] if unit is None else unit
    return None
