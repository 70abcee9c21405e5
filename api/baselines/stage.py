"""The pipeline stage that compares each computed chunk with the unit's baselines.

Registered with :func:`api.pipeline.worker.register_after_compute` (before the alert
rules, which read what it writes): it runs inside every chunk's transaction, after the
unit model's results are stored, and writes for the chunk's intervals

* ``steady`` for every unit, ``ambient_temperature_k`` where the plant has an ambient
  tag, ``destroyed_fraction`` where the kind has an exergy balance;
* per active baseline of metric ``M``: expected value and band, drift, relative drift,
  the extrapolation flag, EWMA and CUSUM (state carried across chunks by
  :mod:`api.baselines.charts`), and the CUSUM alarm events;
* the cost of drift (extra fuel, money, CO2 per hour) from the unit's cost baseline
  (:data:`api.baselines.kinds.PROFILES`), and the headroom against the demonstrated best.

The stage's metrics in the chunk's range are replaced as a whole, so a metric whose
baseline is no longer active loses its columns where the range is recomputed.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd
from sqlalchemy import select
from sqlalchemy.orm import Session

from api.baselines import metrics as names
from api.baselines.charts import (
    chart_of,
    observed,
    replace_events,
    save_checkpoint,
    state_at,
)
from api.baselines.data import (
    ambient_temperature,
    computed,
    grid,
    load_frame,
    steady_flags,
)
from api.baselines.kinds import EFFICIENCY, KindProfile, profile, window_intervals
from api.baselines.models import Baseline
from api.core.problems import NotFound
from api.pipeline.quality import FLAGS_METRIC
from api.plants.service import UnitConfig, load_unit_config
from api.results.store import replace_results
from engine import baseline as engine_baseline
from engine.cost import drift_cost, extra_fuel_from_efficiency, extra_fuel_from_heat_rate
from engine.drift import absolute_drift, drift_frame, relative_drift
from engine.headroom import DemonstratedBest, headroom


@dataclass
class Chunk:
    """What the stage has read for one unit and range."""

    config: UnitConfig
    profile: KindProfile
    start_ms: int
    end_ms: int
    data: pd.DataFrame
    """Stored results (and ambient T0) on the regular grid from the steady lookback to end."""
    rows: pd.Index
    """Computed intervals of [start, end): the rows written."""
    steady: pd.Series
    """Steady flag of ``rows``."""


def active_baselines(session: Session, unit_id: int) -> list[Baseline]:
    return list(
        session.scalars(
            select(Baseline)
            .where(Baseline.unit_id == unit_id, Baseline.active.is_(True))
            .order_by(Baseline.metric)
        )
    )


def _needed(prof: KindProfile, baselines: list[Baseline]) -> list[str]:
    wanted = [FLAGS_METRIC, *prof.steady_columns()]
    if prof.load:
        wanted.append(prof.load)
    for b in baselines:
        wanted += [b.metric, *b.regressors]
    for basis in prof.cost:
        wanted += [basis.metric, basis.column]
    if prof.exergy_in:
        wanted += [prof.exergy_in, *prof.exergy_out, "eta_2"]
    for b in baselines:
        if b.best:
            wanted.append(b.best["load"])
    return [w for w in dict.fromkeys(wanted) if w != names.AMBIENT]


def read_chunk(
    session: Session, config: UnitConfig, baselines: list[Baseline], start_ms: int, end_ms: int
) -> Chunk:
    prof = profile(config.kind)
    interval_ms = config.interval_seconds * 1000
    window = window_intervals(config.interval_seconds)
    lo = start_ms - (window - 1) * interval_ms
    stored = load_frame(session, config.unit_id, _needed(prof, baselines), lo, end_ms)
    data = stored.reindex(grid(lo, end_ms, interval_ms))
    ambient = ambient_temperature(session, config, lo, end_ms)
    if ambient is not None:
        data[names.AMBIENT] = ambient.reindex(data.index).to_numpy()
    steady = steady_flags(data, prof.steady, prof.load, window)
    done = computed(stored)
    rows = stored.index[done.to_numpy() & (stored.index >= start_ms)]
    return Chunk(config, prof, start_ms, end_ms, data, rows, steady.reindex(rows))


def _column(data: pd.DataFrame, rows: pd.Index, name: str) -> pd.Series:
    if name in data:
        return data[name].reindex(rows).astype(float)
    return pd.Series(np.nan, index=rows, dtype=float)


def _flag(values: np.ndarray, known: np.ndarray) -> np.ndarray:
    return np.where(known, np.asarray(values, dtype=float), np.nan)


def baseline_columns(
    session: Session, chunk: Chunk, baseline: Baseline
) -> tuple[pd.DataFrame, pd.Series]:
    """The per-interval columns of one baseline over the chunk's rows (and write its
    chart checkpoint and alarm events). Returns (columns, expected value)."""
    rows = chunk.rows
    model = engine_baseline.Baseline.from_dict(baseline.model)
    regressors = pd.DataFrame({r: _column(chunk.data, rows, r) for r in model.regressors})
    prediction = engine_baseline.predict(model, regressors)
    known = np.isfinite(regressors.to_numpy(dtype=float)).all(axis=1)
    actual = _column(chunk.data, rows, baseline.metric)
    expected = prediction["expected"]
    col = names.metric_names(baseline.metric)
    out = pd.DataFrame(
        {
            col["expected"]: expected,
            col["expected_lower"]: prediction["expected_lower"],
            col["expected_upper"]: prediction["expected_upper"],
            col["drift"]: absolute_drift(actual, expected),
            col["drift_rel"]: relative_drift(actual, expected),
            col["extrapolated"]: _flag(prediction["extrapolated"].to_numpy(), known),
        },
        index=rows,
    )
    for key in ("ewma", "cusum_upper", "cusum_lower", "cusum_alarm"):
        out[col[key]] = np.nan
    origin = baseline.chart_origin_ms
    if origin is None or chunk.end_ms <= origin:
        return out, expected
    chart_start = max(chunk.start_ms, origin)
    states = state_at(session, baseline, chunk.config.unit_id, chart_start)
    if states is None:
        return out, expected
    charted = rows[rows >= chart_start]
    flags = _column(chunk.data, charted, FLAGS_METRIC).to_numpy()
    observe = observed(chunk.steady.reindex(charted).to_numpy(dtype=float), flags)
    chart = chart_of(baseline)
    result = drift_frame(
        actual.reindex(charted),
        prediction.reindex(charted),
        float(model.residual_std),
        observe=observe,
        lam=chart.ewma_lambda,
        width=chart.ewma_width,
        k=chart.k,
        h=chart.h,
        ewma_state=states[0],
        cusum_state=states[1],
    )
    frame = result.frame
    out.loc[charted, col["ewma"]] = frame["ewma"].to_numpy()
    out.loc[charted, col["cusum_upper"]] = frame["cusum_upper"].to_numpy()
    out.loc[charted, col["cusum_lower"]] = frame["cusum_lower"].to_numpy()
    alarm = np.where(
        frame["cusum_alarm_upper"].to_numpy(),
        1.0,
        np.where(frame["cusum_alarm_lower"].to_numpy(), -1.0, 0.0),
    )
    out.loc[charted, col["cusum_alarm"]] = alarm
    replace_events(
        session, baseline, chunk.config.unit_id, chart_start, chunk.end_ms, result.events
    )
    save_checkpoint(
        session, baseline, chunk.config.unit_id, chunk.end_ms, result.ewma_state, result.cusum_state
    )
    return out, expected


def cost_columns(
    chunk: Chunk, expected: dict[str, pd.Series], co2_kg_per_j: float | None
) -> pd.DataFrame | None:
    """Extra fuel, cost and CO2 per hour from the first cost basis with an active baseline."""
    basis = next((b for b in chunk.profile.cost if b.metric in expected), None)
    if basis is None:
        return None
    rows = chunk.rows
    actual = _column(chunk.data, rows, basis.metric)
    other = _column(chunk.data, rows, basis.column)
    if basis.method == EFFICIENCY:
        extra = extra_fuel_from_efficiency(other, actual, expected[basis.metric])
    else:
        extra = extra_fuel_from_heat_rate(actual, expected[basis.metric], other)
    price = chunk.config.fuel_price_per_gj
    money = drift_cost(
        pd.Series(np.asarray(extra, dtype=float), index=rows),
        math.nan if price is None else float(price),
        co2_kg_per_j,
    )
    return pd.DataFrame(
        {
            names.EXTRA_FUEL: money["extra_fuel_w"],
            names.COST: money["cost_per_h"],
            names.CO2: money["co2_kg_per_h"],
        },
        index=rows,
    )


def demonstrated_best(baselines: list[Baseline]) -> DemonstratedBest | None:
    """The headroom reference: the active eta_2 baseline's, else the most recently
    activated active baseline that has one."""
    with_best = [b for b in baselines if b.best]
    if not with_best:
        return None
    chosen = next((b for b in with_best if b.metric == "eta_2"), None)
    if chosen is None:
        chosen = max(with_best, key=lambda b: (b.activated_at is not None, b.activated_at, b.id))
    return DemonstratedBest.from_dict(chosen.best or {})


def headroom_columns(chunk: Chunk, best: DemonstratedBest | None) -> pd.DataFrame | None:
    prof = chunk.profile
    if not prof.exergy_in:
        return None
    rows = chunk.rows
    e_in = _column(chunk.data, rows, prof.exergy_in)
    lost = sum((_column(chunk.data, rows, c) for c in prof.exergy_out), start=e_in * 0.0)
    if best is None:
        with np.errstate(divide="ignore", invalid="ignore"):
            fraction = lost / e_in.where(e_in > 0)
        return pd.DataFrame({names.DESTROYED_FRACTION: fraction}, index=rows)
    fuel = chunk.config.fuel
    ratio = None
    price = None
    if prof.fuel_exergy_input and fuel is not None and fuel.hhv_j_per_kg > 0:
        ratio = fuel.chemical_exergy_j_per_kg / fuel.hhv_j_per_kg
        price = chunk.config.fuel_price_per_gj
    frame = headroom(
        e_in,
        lost,
        _column(chunk.data, rows, "eta_2"),
        _column(chunk.data, rows, best.load),
        best,
        fuel_price_per_gj=price,
        fuel_exergy_per_hhv=ratio,
    )
    return pd.DataFrame(
        {
            names.DESTROYED_FRACTION: frame["destroyed_fraction"].to_numpy(),
            names.HEADROOM: frame["recoverable_w"].to_numpy(),
            names.HEADROOM_COST: frame["recoverable_cost_per_h"].to_numpy(),
        },
        index=rows,
    )


def apply_baselines(session: Session, unit_id: int, start_ms: int, end_ms: int) -> None:
    """After-compute hook: write the stage's columns for the unit's intervals in
    [start, end) (replacing the stage's previous ones there). Does not commit."""
    try:
        config = load_unit_config(session=session, unit_id=unit_id)
    except NotFound:
        return
    baselines = active_baselines(session, unit_id)
    chunk = read_chunk(session, config, baselines, start_ms, end_ms)
    parts = [pd.DataFrame({names.STEADY: chunk.steady.astype(float)}, index=chunk.rows)]
    if names.AMBIENT in chunk.data:
        parts.append(pd.DataFrame({names.AMBIENT: _column(chunk.data, chunk.rows, names.AMBIENT)}))
    expected: dict[str, pd.Series] = {}
    for baseline in baselines:
        columns, expected[baseline.metric] = baseline_columns(session, chunk, baseline)
        parts.append(columns)
    fuel = config.fuel
    cost = cost_columns(chunk, expected, fuel.co2_kg_per_j if fuel else None)
    if cost is not None:
        parts.append(cost)
    room = headroom_columns(chunk, demonstrated_best(baselines))
    if room is not None:
        parts.append(room)
    frame = pd.concat(parts, axis=1)
    replace_results(session, unit_id, start_ms, end_ms, frame, only=_written(session, unit_id))


def _written(session: Session, unit_id: int) -> list[str]:
    """Every metric the stage may have stored for the unit: its unit-wide metrics and the
    per-metric columns of each metric that has a baseline version (active or not)."""
    fitted = session.scalars(
        select(Baseline.metric).where(Baseline.unit_id == unit_id).distinct()
    ).all()
    out = [c.name for c in names.UNIT_METRICS]
    for metric in fitted:
        out += list(names.metric_names(metric).values())
    return out
