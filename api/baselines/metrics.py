"""The result metrics the baselines stage writes, and their declaration to the results API.

Per unit, every interval:

==========================  ==============================================================
``steady``                  1 when the unit was in steady state over the trailing window,
                            0 when not (:mod:`api.baselines.kinds`)
``ambient_temperature_k``   T0 the pipeline used (plants with an ambient tag only) [K]
``destroyed_fraction``      exergy destroyed plus lost over exergy input [-]
==========================  ==============================================================

Per active baseline of metric ``M`` (names as :mod:`api.alerts.conventions` reads them):
``expected_M``, ``expected_lower_M``, ``expected_upper_M`` (prediction band),
``drift_M`` (actual - expected), ``drift_rel_M`` (over expected), ``extrapolated_M``
(1: a regressor outside the fit range, expected not given), ``ewma_M``,
``cusum_upper_M``, ``cusum_lower_M`` (in units of the baseline's residual standard
deviation) and ``cusum_alarm_M`` (+1 upper alarm, -1 lower alarm, 0 none).

Per unit, from its cost baseline and demonstrated best: ``drift_extra_fuel_w``,
``drift_cost_per_h``, ``drift_co2_kg_per_h``, ``headroom_recoverable_w``,
``headroom_cost_per_h``.

Money is in the plant's currency, declared with the unit ``1/h`` (per hour; the currency
code comes with the plant and the drift summary).
"""

from __future__ import annotations

import functools
from collections.abc import Iterable

from engine.catalogue import ResultColumn, all_kinds

STEADY = "steady"
AMBIENT = "ambient_temperature_k"
AMBIENT_ALIASES = ("ambient_temperature", AMBIENT)
"""Names a caller may use for the ambient regressor."""
DESTROYED_FRACTION = "destroyed_fraction"
EXTRA_FUEL = "drift_extra_fuel_w"
COST = "drift_cost_per_h"
CO2 = "drift_co2_kg_per_h"
HEADROOM = "headroom_recoverable_w"
HEADROOM_COST = "headroom_cost_per_h"
MONEY_PER_H = "1/h"

PER_METRIC: tuple[tuple[str, str | None, str], ...] = (
    ("expected_", None, "Expected by the active baseline"),
    ("expected_lower_", None, "Lower end of the baseline's prediction band"),
    ("expected_upper_", None, "Upper end of the baseline's prediction band"),
    ("drift_", None, "Drift from baseline: actual minus expected"),
    ("drift_rel_", "1", "Relative drift from baseline: (actual - expected) / expected"),
    ("extrapolated_", "1", "Outside the baseline's fit range: 1, expected not given; else 0"),
    ("ewma_", "1", "EWMA of the drift in residual standard deviations"),
    ("cusum_upper_", "1", "Upper tabular CUSUM of the drift in residual standard deviations"),
    ("cusum_lower_", "1", "Lower tabular CUSUM of the drift in residual standard deviations"),
    ("cusum_alarm_", "1", "CUSUM alarm: +1 upper, -1 lower, 0 none"),
)
"""(prefix, unit or None for the base metric's unit, description)."""

CHART_PREFIXES = ("ewma_", "cusum_upper_", "cusum_lower_", "cusum_alarm_")

UNIT_METRICS: tuple[ResultColumn, ...] = (
    ResultColumn(
        STEADY,
        "1",
        "Steady state: 1 when load and key results held within their limits over the "
        "trailing window, else 0.",
    ),
    ResultColumn(AMBIENT, "K", "Ambient temperature: the dead-state T0 used per interval."),
    ResultColumn(
        DESTROYED_FRACTION, "1", "Destroyed fraction: exergy destroyed and lost over exergy input."
    ),
    ResultColumn(
        EXTRA_FUEL, "W", "Extra fuel from drift: fuel energy (HHV) burnt beyond the baseline."
    ),
    ResultColumn(COST, MONEY_PER_H, "Cost of drift: extra fuel at the plant's price, per hour."),
    ResultColumn(CO2, "kg/h", "CO2 of drift: extra fuel's CO2 per hour."),
    ResultColumn(
        HEADROOM,
        "W",
        "Recoverable headroom: exergy destroyed and lost beyond the demonstrated best eta_2.",
    ),
    ResultColumn(
        HEADROOM_COST,
        MONEY_PER_H,
        "Headroom value: fuel saved at the demonstrated best, at the plant's price, per hour.",
    ),
)

NAME_LIMIT = 64
"""Longest metric name the results table stores."""


def metric_names(metric: str) -> dict[str, str]:
    """Prefix (without the trailing underscore) -> result metric name, for metric ``M``."""
    return {prefix.rstrip("_"): prefix + metric for prefix, _, _ in PER_METRIC}


def per_metric_columns(base: ResultColumn) -> list[ResultColumn]:
    return [
        ResultColumn(prefix + base.name, unit or base.unit, f"{text} ({base.name}).")
        for prefix, unit, text in PER_METRIC
        if len(prefix + base.name) <= NAME_LIMIT
    ]


@functools.lru_cache(maxsize=64)
def declared(kind_name: str) -> tuple[ResultColumn, ...]:
    """Every metric the stage may write for a unit of ``kind_name``: the unit metrics, then
    the per-metric columns of each result of the kind (any result may have a baseline)."""
    kind = all_kinds().get(kind_name)
    out = list(UNIT_METRICS)
    for column in kind.results if kind else ():
        out += per_metric_columns(column)
    return tuple(out)


def declared_names(kind_name: str) -> list[str]:
    return [c.name for c in declared(kind_name)]


def _provider(kind_name: str) -> Iterable[ResultColumn]:
    return declared(kind_name)


def register() -> None:
    """Declare the stage's metrics to the results API (and so to the pipeline, which then
    leaves them alone when it replaces a range)."""
    from api.results.metrics import register_metric_provider

    register_metric_provider(_provider)
