"""Stored results as wide frames on the plant's interval grid, the per-interval ambient
temperature, and the steady-state flag — shared by fitting and the pipeline stage."""

from __future__ import annotations

from collections.abc import Iterable, Sequence

import numpy as np
import pandas as pd
from sqlalchemy import bindparam, text
from sqlalchemy.orm import Session

from api.pipeline.averaging import interval_edges, interval_means
from api.pipeline.compute import Averaging, hold_ms, load_readings
from api.pipeline.quality import FLAGS_METRIC
from api.plants.service import UnitConfig
from engine.steady import SteadyLimit, steady_state

_SELECT = text(
    "SELECT metric, t_ms, value FROM results "
    "WHERE unit_id = :u AND metric IN :metrics AND t_ms >= :s AND t_ms < :e"
).bindparams(bindparam("metrics", expanding=True))


def load_frame(
    session: Session, unit_id: int, metrics: Iterable[str], start_ms: int, end_ms: int
) -> pd.DataFrame:
    """The unit's stored ``metrics`` over [start, end): index ``t_ms`` (every interval with
    a row of any of them, ascending), one float column per metric (NaN: no value)."""
    names = list(dict.fromkeys(metrics))
    index = pd.Index(np.empty(0, np.int64), name="t_ms")
    if not names:
        return pd.DataFrame(index=index)
    rows = session.execute(
        _SELECT, {"u": unit_id, "metrics": names, "s": start_ms, "e": end_ms}
    ).all()
    if not rows:
        return pd.DataFrame({m: pd.Series(dtype=float) for m in names}, index=index)
    metric = np.array([r[0] for r in rows], dtype=object)
    t = np.fromiter((r[1] for r in rows), np.int64, len(rows))
    value = np.array([r[2] for r in rows], dtype=float)  # None -> nan
    times = np.unique(t)
    position = np.searchsorted(times, t)
    out = np.full((len(times), len(names)), np.nan)
    for j, name in enumerate(names):
        mask = metric == name
        out[position[mask], j] = value[mask]
    return pd.DataFrame(out, index=pd.Index(times, name="t_ms"), columns=names)


def grid(start_ms: int, end_ms: int, interval_ms: int) -> pd.Index:
    """Interval starts of [start, end) on the plant grid (start aligned down)."""
    first = (start_ms // interval_ms) * interval_ms
    return pd.Index(np.arange(first, end_ms, interval_ms, dtype=np.int64), name="t_ms")


def computed(frame: pd.DataFrame) -> pd.Series:
    """True where the pipeline computed the interval (it always stores ``flags`` then)."""
    if FLAGS_METRIC not in frame:
        return pd.Series(False, index=frame.index)
    return frame[FLAGS_METRIC].notna()


def ambient_temperature(
    session: Session, config: UnitConfig, start_ms: int, end_ms: int
) -> pd.Series | None:
    """T0 per interval of [start, end) as the pipeline uses it: the ambient tag's
    time-weighted mean where it covers enough of the interval, else the plant's T0. None
    when the plant has no ambient tag. [K]"""
    tag = config.ambient_tag_id
    if tag is None:
        return None
    interval_ms = config.interval_seconds * 1000
    index = grid(start_ms, end_ms, interval_ms)
    if len(index) == 0:
        return pd.Series(dtype=float, index=index)
    averaging = Averaging()
    hold = hold_ms(config, averaging)
    edges = interval_edges(int(index[0]), int(index[-1]) + interval_ms, interval_ms)
    loaded = load_readings(session, [tag], int(edges[0]) - hold, int(edges[-1]) + hold)
    mean, cover = interval_means(*loaded[tag], edges, hold)
    t0 = np.where(cover >= averaging.min_coverage, mean, config.t0_k)
    return pd.Series(t0, index=index, name="ambient_temperature_k")


def steady_flags(
    frame: pd.DataFrame, limits: Sequence[SteadyLimit], load: str | None, window: int
) -> pd.Series:
    """Steady state per row of ``frame`` (regular grid, gaps as NaN rows): every limit
    holds over the trailing ``window`` rows and the load is positive. No limits: False."""
    if not limits:
        return pd.Series(False, index=frame.index, name="steady")
    columns = list(dict.fromkeys([lim.column for lim in limits] + ([load] if load else [])))
    data = frame.reindex(columns=columns)
    steady = steady_state(data, limits, window)
    if load:
        with np.errstate(invalid="ignore"):
            steady &= data[load].to_numpy(dtype=float) > 0
    return steady


def steady_reasons(
    frame: pd.DataFrame,
    limits: Sequence[SteadyLimit],
    load: str | None,
    window: int,
    rows: pd.Index,
    interval_s: float,
) -> list[str]:
    """Why intervals of ``rows`` are not steady: one sentence per limit (and the load)
    with how many of them it failed."""
    reasons = []
    for limit in limits:
        alone = steady_state(frame.reindex(columns=[limit.column]), [limit], window)
        failed = int((~alone.reindex(rows).fillna(False).astype(bool)).sum())
        reasons.append(
            f"{failed} failed the limit on {limit.column!r} ({describe(limit)} over "
            f"{window} intervals = {window * interval_s:g} s, without a gap)"
        )
    if load and load in frame:
        with np.errstate(invalid="ignore"):
            off = int((~(frame[load].reindex(rows).to_numpy(dtype=float) > 0)).sum())
        reasons.append(f"{off} had no positive load {load!r} (unit off or load not computed)")
    return reasons


def describe(limit: SteadyLimit) -> str:
    """``spread within 5 % of its mean`` and/or ``standard deviation within ...``."""
    parts = []
    for name, value in (("spread", limit.max_range), ("standard deviation", limit.max_std)):
        if value is not None:
            amount = f"{100 * value:g} % of its mean" if limit.relative else f"{value:g}"
            parts.append(f"{name} within {amount}")
    return " and ".join(parts)
