"""The control charts' state carried from one computed chunk to the next.

The EWMA and the tabular CUSUM are recursions: an interval's value depends on every
observation before it since the chart's origin (the activation's recompute start). The
stage keeps *checkpoints*: the state after every interval before ``t``, written at the end
of each chunk. A chunk starting at ``t`` continues from the checkpoint at ``t`` (the usual
case: the worker computes a unit's span chunk by chunk in time order, and a unit's spans
earliest first), or from the latest one before it, replaying the stored drift in between
(a recompute of an earlier range, late readings). A replay over more than
:data:`REPLAY_LIMIT` computed intervals is not attempted: that chunk gets expected values
and drift but no chart values, and writes no checkpoint. (A gap without results costs
nothing: a unit that was off for a month continues its chart at once.)

A recomputed earlier range is charted again from its checkpoint; the intervals after it
keep the chart values they had (the charts are not redrawn forward, as alerts are not
raised again for the past). A full redraw: activate the baseline again.

Checkpoints kept: the origin, those of the last hour before the newest write, and the
last one of each earlier UTC day.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd
from sqlalchemy import delete, func, insert, select
from sqlalchemy.orm import Session

from api.baselines.data import load_frame
from api.baselines.metrics import STEADY
from api.baselines.models import Baseline, ChartCheckpoint, DriftEvent
from api.pipeline.quality import FLAGS_METRIC
from api.results.models import ResultValue
from engine.drift import (
    CUSUM_K,
    EWMA_L,
    EWMA_LAMBDA,
    CusumState,
    EwmaState,
    cusum,
    decision_interval_for_arl0,
    ewma,
)

DAY_MS = 86_400_000
RECENT_MS = 3_600_000
"""Checkpoints of the last hour are all kept: live readings arrive as one-interval spans
overlapping by the interval a reading holds into, and each continues from the one before."""
REPLAY_LIMIT = 10_080
"""Most stored intervals replayed to rebuild a chart's state (a week of minutes). [-]"""
FALSE_ALARM_SPACING_S = 365.0 * 86_400.0
"""Default in-control average run length of the CUSUM, as time: one false alarm a year
on independent residuals (h from Siegmund's approximation; for k = 0.5 at 60 s intervals
h = 12.0). Minute data are usually autocorrelated, which shortens it. [s]"""


@dataclass(frozen=True)
class ChartSettings:
    """Parameters of a baseline's charts (in units of its residual standard deviation)."""

    k: float
    h: float
    ewma_lambda: float
    ewma_width: float

    def to_dict(self) -> dict[str, float]:
        return {
            "k": self.k,
            "h": self.h,
            "ewma_lambda": self.ewma_lambda,
            "ewma_width": self.ewma_width,
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> ChartSettings:
        return cls(
            float(data["k"]),
            float(data["h"]),
            float(data["ewma_lambda"]),
            float(data["ewma_width"]),
        )


def default_chart(
    interval_seconds: float,
    *,
    k: float | None = None,
    h: float | None = None,
    ewma_lambda: float | None = None,
    ewma_width: float | None = None,
) -> ChartSettings:
    """Chart parameters: given values, else k = 0.5, h for one false alarm a year at the
    plant's interval, EWMA lambda 0.1 with L = 2.814 (:mod:`engine.drift` defaults)."""
    k = CUSUM_K if k is None else float(k)
    if h is None:
        h = decision_interval_for_arl0(FALSE_ALARM_SPACING_S / float(interval_seconds), k)
    return ChartSettings(
        k=k,
        h=float(h),
        ewma_lambda=EWMA_LAMBDA if ewma_lambda is None else float(ewma_lambda),
        ewma_width=EWMA_L if ewma_width is None else float(ewma_width),
    )


def chart_of(baseline: Baseline) -> ChartSettings:
    return ChartSettings.from_dict(baseline.settings["chart"])


def standardised(drift: np.ndarray, observe: np.ndarray, residual_std: float) -> np.ndarray:
    """Chart input: drift in residual standard deviations where observed, else NaN."""
    with np.errstate(invalid="ignore", divide="ignore"):
        z = np.asarray(drift, dtype=float) / residual_std
    return np.where(np.asarray(observe, dtype=bool), z, np.nan)


def observed(steady: np.ndarray, flags: np.ndarray) -> np.ndarray:
    """Intervals that feed the charts: steady and without any quality flag."""
    with np.errstate(invalid="ignore"):
        return (np.asarray(steady, dtype=float) == 1.0) & (np.asarray(flags, dtype=float) == 0.0)


def _states(cp: ChartCheckpoint) -> tuple[EwmaState, CusumState]:
    return EwmaState(cp.ewma, cp.ewma_count), CusumState(
        upper=cp.cusum_upper,
        lower=cp.cusum_lower,
        upper_run=cp.upper_run,
        lower_run=cp.lower_run,
        upper_since=cp.upper_since_ms,
        lower_since=cp.lower_since_ms,
    )


def latest_checkpoint(
    session: Session, unit_id: int, metric: str, baseline_id: int, at_or_before: int | None = None
) -> ChartCheckpoint | None:
    query = select(ChartCheckpoint).where(
        ChartCheckpoint.unit_id == unit_id,
        ChartCheckpoint.metric == metric,
        ChartCheckpoint.baseline_id == baseline_id,
    )
    if at_or_before is not None:
        query = query.where(ChartCheckpoint.t_ms <= at_or_before)
    return session.scalars(query.order_by(ChartCheckpoint.t_ms.desc()).limit(1)).first()


def state_at(
    session: Session, baseline: Baseline, unit_id: int, t_ms: int
) -> tuple[EwmaState, CusumState] | None:
    """The charts' state after every interval before ``t_ms``; None when it cannot be had
    (no checkpoint at or before it, or the replay would be too long)."""
    cp = latest_checkpoint(session, unit_id, baseline.metric, baseline.id, t_ms)
    if cp is None:
        return None
    ewma_state, cusum_state = _states(cp)
    if cp.t_ms == t_ms:
        return ewma_state, cusum_state
    between = session.scalar(
        select(func.count())
        .select_from(ResultValue)
        .where(
            ResultValue.unit_id == unit_id,
            ResultValue.metric == FLAGS_METRIC,
            ResultValue.t_ms >= cp.t_ms,
            ResultValue.t_ms < t_ms,
        )
    )
    if (between or 0) > REPLAY_LIMIT:
        return None
    drift_name = "drift_" + baseline.metric
    stored = load_frame(session, unit_id, [drift_name, STEADY, FLAGS_METRIC], cp.t_ms, t_ms)
    if stored.empty:
        return ewma_state, cusum_state
    residual_std = float(baseline.model["residual_std"])
    z = pd.Series(
        standardised(
            stored[drift_name].to_numpy(),
            observed(stored[STEADY].to_numpy(), stored[FLAGS_METRIC].to_numpy()),
            residual_std,
        ),
        index=stored.index,
    )
    chart = chart_of(baseline)
    _, ewma_state = ewma(z, chart.ewma_lambda, chart.ewma_width, state=ewma_state)
    cusum_state = cusum(z, chart.k, chart.h, state=cusum_state).state
    return ewma_state, cusum_state


def _label(value: Any) -> int | None:
    return None if value is None else int(value)


def save_checkpoint(
    session: Session,
    baseline: Baseline,
    unit_id: int,
    t_ms: int,
    ewma_state: EwmaState,
    cusum_state: CusumState,
) -> None:
    """Store the state after every interval before ``t_ms``; prune the same UTC day's
    checkpoints older than :data:`RECENT_MS` before it (never the origin)."""
    metric = baseline.metric
    origin = baseline.chart_origin_ms
    day = (t_ms // DAY_MS) * DAY_MS
    same = [ChartCheckpoint.unit_id == unit_id, ChartCheckpoint.metric == metric]
    older = [ChartCheckpoint.t_ms >= day, ChartCheckpoint.t_ms < t_ms - RECENT_MS]
    if origin is not None:
        older.append(ChartCheckpoint.t_ms != origin)
    session.execute(delete(ChartCheckpoint).where(*same, *older))
    session.execute(delete(ChartCheckpoint).where(*same, ChartCheckpoint.t_ms == t_ms))
    session.add(
        ChartCheckpoint(
            unit_id=unit_id,
            metric=metric,
            t_ms=t_ms,
            baseline_id=baseline.id,
            ewma=_finite(ewma_state.value),
            ewma_count=int(ewma_state.count),
            cusum_upper=_finite(cusum_state.upper),
            cusum_lower=_finite(cusum_state.lower),
            upper_run=int(cusum_state.upper_run),
            lower_run=int(cusum_state.lower_run),
            upper_since_ms=_label(cusum_state.upper_since),
            lower_since_ms=_label(cusum_state.lower_since),
        )
    )
    session.flush()


def _finite(value: float) -> float:
    return float(value) if math.isfinite(value) else 0.0


def reset(session: Session, baseline: Baseline, unit_id: int, origin_ms: int) -> None:
    """Start the charts of ``baseline`` afresh at ``origin_ms``: drop the metric's
    checkpoints and its alarm events from the origin on."""
    session.execute(
        delete(ChartCheckpoint).where(
            ChartCheckpoint.unit_id == unit_id, ChartCheckpoint.metric == baseline.metric
        )
    )
    session.execute(
        delete(DriftEvent).where(
            DriftEvent.unit_id == unit_id,
            DriftEvent.metric == baseline.metric,
            DriftEvent.alarm_ms >= origin_ms,
        )
    )
    session.flush()
    save_checkpoint(session, baseline, unit_id, origin_ms, EwmaState(), CusumState())


def replace_events(
    session: Session,
    baseline: Baseline,
    unit_id: int,
    start_ms: int,
    end_ms: int,
    events: pd.DataFrame,
) -> None:
    """The metric's CUSUM alarms in [start, end) become ``events`` (engine.drift.cusum)."""
    session.execute(
        delete(DriftEvent).where(
            DriftEvent.unit_id == unit_id,
            DriftEvent.metric == baseline.metric,
            DriftEvent.alarm_ms >= start_ms,
            DriftEvent.alarm_ms < end_ms,
        )
    )
    rows = [
        {
            "baseline_id": baseline.id,
            "unit_id": unit_id,
            "metric": baseline.metric,
            "alarm_ms": int(e.alarm_at),
            "side": str(e.side),
            "shift_start_ms": _label(e.shift_start),
            "run_length": int(e.run_length),
            "statistic": float(e.statistic),
            "estimated_shift": float(e.estimated_shift),
        }
        for e in events.itertuples(index=False)
    ]
    if rows:
        session.execute(insert(DriftEvent), rows)
