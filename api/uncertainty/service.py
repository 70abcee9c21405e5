"""Which inputs a result's uncertainty comes from: the instrument to fix first.

Computed on demand (nothing is stored): the unit's readings are averaged again over the
requested intervals exactly as the compute step does (:func:`api.pipeline.compute.
prepare_range`), every input gets its stated or default figure and the scatter of its
readings (:mod:`api.uncertainty.specs`), and :func:`engine.uncertainty.propagate` gives
each input's sensitivity. For a long period at most :data:`MAX_INTERVALS` computed
intervals are used, evenly spread over it (every one when there are fewer).

What is ranked is each input's share of the variance of the result *over the intervals
used*: for one interval ``(c_i b_i)^2 + (c_i s_i)^2``; for the mean of ``n`` intervals
(ASME PTC 19.1's treatment of averages, :func:`engine.uncertainty.mean_over_intervals`)

    systematic_i = (sum_r c_ir b_ir / n)^2     the same instrument error in every interval
    random_i     =  sum_r (c_ir s_ir)^2 / n^2  independent from interval to interval

so over a long period the random parts shrink and the calibration of the instruments is
what remains to fix.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from sqlalchemy import select
from sqlalchemy.orm import Session

from api.core.problems import InvalidInput, NotFound
from api.pipeline.compute import Prepared, context_of, prepare_range
from api.pipeline.quality import FLAGS_METRIC
from api.plants.service import load_unit_config
from api.results.models import ResultValue
from api.results.service import get_unit_ref, to_ms
from api.uncertainty import specs
from api.uncertainty.metrics import banded
from engine.catalogue import get_kind
from engine.uncertainty import (
    COVERAGE_FACTOR_95,
    FUEL_DENSITY,
    FUEL_HEATING_VALUE,
    propagate,
)

MAX_INTERVALS = 120
"""Most intervals one request propagates (our choice: each sampled interval is read and
averaged again, and 120 spread over a period already pin a ranking down; a request stays
well under a second for a boiler)."""

_PSEUDO_UNITS = {FUEL_HEATING_VALUE: "J/kg", FUEL_DENSITY: "kg/m^3"}


@dataclass
class Contributor:
    input: str
    tag: str | None
    source: str
    note: str
    unit: str
    value: float
    u_systematic: float
    u_random: float
    sensitivity: float
    sensitivity_relative: float
    contribution: float
    share: float


@dataclass
class Contributions:
    unit: str
    metric: str
    metric_unit: str
    start_ms: int
    end_ms: int
    basis: str
    intervals_in_period: int
    intervals_used: int
    value: float
    u: float
    u_random: float
    u_systematic: float
    u95: float
    contributors: list[Contributor] = field(default_factory=list)


def _computed_intervals(session: Session, unit_id: int, start_ms: int, end_ms: int) -> np.ndarray:
    # Every computed interval has a flags row (the primary key answers from its index).
    rows = session.scalars(
        select(ResultValue.t_ms)
        .where(
            ResultValue.unit_id == unit_id,
            ResultValue.metric == FLAGS_METRIC,
            ResultValue.t_ms >= start_ms,
            ResultValue.t_ms < end_ms,
        )
        .order_by(ResultValue.t_ms)
    ).all()
    return np.asarray(rows, dtype=np.int64)


def _latest_interval(session: Session, unit_id: int) -> int | None:
    return session.scalar(
        select(ResultValue.t_ms)
        .where(ResultValue.unit_id == unit_id, ResultValue.metric == FLAGS_METRIC)
        .order_by(ResultValue.t_ms.desc())
        .limit(1)
    )


def sample(times: np.ndarray, most: int) -> np.ndarray:
    """At most ``most`` of ``times``, evenly spread (all of them when fewer)."""
    if len(times) <= most:
        return times
    return times[np.unique(np.linspace(0, len(times) - 1, most).round().astype(np.int64))]


def _runs(times: np.ndarray, interval_ms: int) -> list[tuple[int, int]]:
    """Consecutive intervals as [start, end) ranges (one read per run)."""
    breaks = np.flatnonzero(np.diff(times) != interval_ms) + 1
    return [(int(r[0]), int(r[-1]) + interval_ms) for r in np.split(times, breaks)]


def _join(parts: list[Prepared]) -> Prepared:
    if len(parts) == 1:
        return parts[0]
    roles = list(parts[0].random)
    t0 = None
    if any(p.t0_k is not None for p in parts):
        t0 = np.concatenate([p.t0_k for p in parts if p.t0_k is not None])
    return Prepared(
        inputs=pd.concat([p.inputs for p in parts]),
        cover=np.concatenate([p.cover for p in parts]),
        data_flags=np.concatenate([p.data_flags for p in parts]),
        t0_k=t0,
        random={r: np.concatenate([p.random[r] for p in parts]) for r in roles},
    )


def contributors(
    *,
    session: Session,
    unit_slug: str,
    metric: str | None = None,
    start: dt.datetime | None = None,
    end: dt.datetime | None = None,
    limit: int | None = None,
    max_intervals: int = MAX_INTERVALS,
) -> Contributions:
    """The inputs ranked by their share of ``metric``'s variance (see the module notes).

    Without ``start`` and ``end``: the latest computed interval. With them: the mean over
    the computed intervals of [start, end) (at most ``max_intervals``, evenly spread).

    Raises NotFound for an unknown unit or a period without a computed interval with a
    value of the metric; InvalidInput for an unknown metric or a bad range.
    """
    ref = get_unit_ref(session, unit_slug)
    kind = get_kind(ref.kind)
    results = {c.name: c for c in kind.results}
    if metric is None:
        with_band = banded(ref.kind)
        metric = with_band[0].name if with_band else kind.results[0].name
    if metric not in results:
        message = (
            f"unit {unit_slug!r} (kind {ref.kind}) computes no metric {metric!r}; "
            f"known: {', '.join(results)}"
        )
        raise InvalidInput(message, errors=[{"field": "metric", "message": message}])
    if (start is None) != (end is None):
        message = "give both start and end (a period), or neither (the latest interval)"
        raise InvalidInput(message, errors=[{"field": "start", "message": message}])
    if start is not None and end is not None:
        start_ms, end_ms = to_ms(start), to_ms(end)
        if start_ms >= end_ms:
            message = "start must be before end"
            raise InvalidInput(message, errors=[{"field": "start", "message": message}])
        times = _computed_intervals(session, ref.id, start_ms, end_ms)
        basis = "mean"
    else:
        latest = _latest_interval(session, ref.id)
        times = np.asarray([] if latest is None else [latest], dtype=np.int64)
        start_ms = int(latest) if latest is not None else 0
        end_ms = start_ms + ref.interval_ms
        basis = "interval"
    if len(times) == 0:
        raise NotFound(f"unit {unit_slug!r} has no computed interval in the period")
    used = sample(times, max_intervals)

    config = load_unit_config(session=session, unit_id=ref.id)
    parts = [prepare_range(session, config, lo, hi) for lo, hi in _runs(used, ref.interval_ms)]
    present = [p for p in parts if p is not None]
    if not present:
        raise NotFound(f"unit {unit_slug!r} has no readings left in the period")
    prepared = _join(present)
    inputs = prepared.inputs
    figures = specs.input_figures(config, kind, list(inputs.columns))
    given = specs.uncertainties(figures, inputs, random=prepared.random, fuel=config.fuel)
    context = context_of(config, prepared.t0_k)
    prop = propagate(kind, inputs, config.parameters, context, given)
    if metric not in prop.result_columns:
        raise NotFound(f"unit {unit_slug!r} has no value of {metric} in the period")
    j = prop.result_columns.index(metric)
    c = prop.sensitivity[:, j, :]
    b, s = prop.systematic, prop.random
    value = prop.results[metric].to_numpy(dtype=float, na_value=np.nan)
    with np.errstate(invalid="ignore", over="ignore"):
        ok = np.isfinite(value) & np.isfinite(c * b).all(axis=0) & np.isfinite(c * s).all(axis=0)
    n = int(ok.sum())
    if n == 0:
        raise NotFound(f"unit {unit_slug!r} has no value of {metric} in the period")
    c, b, s = c[:, ok], b[:, ok], s[:, ok]
    systematic = (np.sum(c * b, axis=1) / n) ** 2
    random = np.sum((c * s) ** 2, axis=1) / n**2
    variance = systematic + random
    total = float(variance.sum())
    mean_value = float(value[ok].mean())

    by_name = {f.name: f for f in figures}
    ranked: list[Contributor] = []
    for i, name in enumerate(prop.input_names):
        figure = by_name[name]
        if name in inputs.columns:
            x = inputs[name].to_numpy(dtype=float, na_value=np.nan)[ok]
            role = kind.role(name)
            unit_text = role.unit if role is not None else ""
        else:
            fuel = config.fuel
            assert fuel is not None
            nominal = fuel.hhv_j_per_kg if name == FUEL_HEATING_VALUE else fuel.density_kg_per_m3
            x = np.full(n, float(nominal or np.nan))
            unit_text = _PSEUDO_UNITS[name]
        sensitivity = float(c[i].mean())
        ranked.append(
            Contributor(
                input=name,
                tag=figure.tag,
                source=figure.source,
                note=figure.note,
                unit=unit_text,
                value=float(x.mean()),
                u_systematic=float(b[i].mean()),
                u_random=float(np.sqrt(np.mean(s[i] ** 2))),
                sensitivity=sensitivity,
                sensitivity_relative=float(np.mean(c[i] * x / value[ok])),
                contribution=float(np.sqrt(variance[i])),
                share=float(variance[i] / total) if total > 0 else float("nan"),
            )
        )
    ranked.sort(key=lambda item: -item.contribution)
    u_sys, u_rand = float(np.sqrt(systematic.sum())), float(np.sqrt(random.sum()))
    u = float(np.sqrt(total))
    return Contributions(
        unit=ref.slug,
        metric=metric,
        metric_unit=results[metric].unit,
        start_ms=start_ms,
        end_ms=end_ms,
        basis=basis,
        intervals_in_period=len(times),
        intervals_used=n,
        value=mean_value,
        u=u,
        u_random=u_rand,
        u_systematic=u_sys,
        u95=COVERAGE_FACTOR_95 * u,
        contributors=ranked[:limit] if limit is not None else ranked,
    )
