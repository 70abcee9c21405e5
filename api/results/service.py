"""Reading results back: series over a time range, downsampled in SQL; latest; metrics.

Downsampling. When a range holds more intervals than ``max_points``, intervals are
grouped into buckets of a whole number of plant intervals, aligned to the Unix epoch (a
chart panned or zoomed keeps the same buckets): the shortest length giving at most
``max_points`` buckets, rounded up to whole rollup blocks (10 min or 1 h,
:mod:`api.results.rollups`) when it is at least three blocks long. The database does
the grouping (``GROUP BY t_ms / bucket``, integer division on SQLite and PostgreSQL
alike): whole blocks from the rollups, the cut blocks at either end of the range from
the results, combined exactly by sum and count. Per bucket it returns the mean, minimum
and maximum of the interval values and how many there were; only those few rows cross
the wire. NULL results (NaN from the model) are not counted. A bucket with no interval
at all is not returned: the series has gaps, not invented zeros.

The integer ``flags`` are OR-ed per bucket, never averaged: PostgreSQL has ``bit_or``;
SQLite has no bitwise aggregate, so it groups by (bucket, flag value) — a handful of
distinct values per bucket — and numpy ORs those per bucket. Its ``mean``, ``min`` and
``max`` all carry that OR.
"""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from sqlalchemy import bindparam, select, text
from sqlalchemy.orm import Session

from api import measure
from api.core.problems import InvalidInput, NotFound
from api.pipeline.quality import FLAGS_METRIC
from api.plants.models import Plant, Unit
from api.results.metrics import label, unit_metrics
from api.results.rollups import BIT_OR_METRICS, LEVELS_MS, sql
from api.results.schemas import UnitSystem
from engine.catalogue import ResultColumn

DEFAULT_MAX_POINTS = 1000
MIN_MAX_POINTS = 2
MAX_MAX_POINTS = 100_000
"""Bounds of ``max_points``: a raw export longer than this is fetched in pieces."""
DEFAULT_RANGE = dt.timedelta(days=1)
"""Range when ``start`` is not given: this long before ``end``."""


@dataclass(frozen=True)
class UnitRef:
    id: int
    slug: str
    kind: str
    interval_ms: int


@dataclass
class SeriesData:
    """One metric's points, already in the output unit."""

    metric: str
    unit: str
    label: str
    aggregate: str
    t_ms: np.ndarray
    mean: np.ndarray
    min: np.ndarray
    max: np.ndarray
    count: np.ndarray


@dataclass
class ResultSet:
    unit: str
    start_ms: int
    end_ms: int
    unit_system: UnitSystem
    bucket_ms: int | None
    series: list[SeriesData] = field(default_factory=list)


def get_unit_ref(session: Session, slug: str) -> UnitRef:
    row = session.execute(
        select(Unit.id, Unit.slug, Unit.kind, Plant.interval_seconds)
        .join(Plant, Plant.id == Unit.plant_id)
        .where(Unit.slug == slug)
    ).one_or_none()
    if row is None:
        raise NotFound(f"no unit {slug!r}")
    return UnitRef(row.id, row.slug, row.kind, 1000 * int(row.interval_seconds))


def to_ms(moment: dt.datetime) -> int:
    if moment.tzinfo is None:
        raise InvalidInput(
            f"time {moment.isoformat()} has no UTC offset; add 'Z' or '+hh:mm' (RFC 3339)"
        )
    return int(round(moment.timestamp() * 1000))


def rfc3339_many(t_ms: np.ndarray) -> list[str]:
    """UTC epoch milliseconds as RFC 3339 texts (whole seconds unless a value has ms)."""
    arr = np.asarray(t_ms, dtype=np.int64).reshape(-1)
    unit = "s" if not (arr % 1000).any() else "ms"
    stamps = np.datetime_as_string(arr.astype("datetime64[ms]"), unit=unit)  # type: ignore[call-overload]
    return [s + "Z" for s in stamps.tolist()]


def rfc3339(t_ms: int) -> str:
    """One UTC epoch millisecond time as RFC 3339 text."""
    return rfc3339_many(np.array([t_ms]))[0]


def choose_bucket_ms(
    start_ms: int,
    end_ms: int,
    interval_ms: int,
    max_points: int,
    levels_ms: tuple[int, ...] = LEVELS_MS,
) -> int | None:
    """Bucket length for at most ``max_points`` epoch-aligned buckets over [start, end);
    None when the intervals themselves fit.

    The shortest multiple of the interval that fits, rounded up to a multiple of the
    coarsest rollup level no longer than a third of it (so buckets are built from rollups
    and at least three quarters of ``max_points`` remain).
    """
    first = -(-start_ms // interval_ms) * interval_ms
    intervals = max(0, -(-(end_ms - first) // interval_ms))
    if intervals <= max_points:
        return None
    bucket = math.ceil((end_ms - start_ms) / max_points / interval_ms) * interval_ms

    def buckets(b: int) -> int:
        return (end_ms - 1) // b - start_ms // b + 1

    while buckets(bucket) > max_points:  # at most a step or two past the estimate
        bucket += interval_ms
    for level in sorted(levels_ms, reverse=True):
        if level % interval_ms == 0 and 3 * level <= bucket:
            return -(-bucket // level) * level
    return bucket


def rollup_level(bucket_ms: int, interval_ms: int) -> int | None:
    """The coarsest rollup level a bucket is made of, or None (from the results)."""
    for level in sorted(LEVELS_MS, reverse=True):
        if bucket_ms % level == 0 and level % interval_ms == 0:
            return level
    return None


def resolve_metrics(unit: UnitRef, requested: list[str] | None) -> dict[str, ResultColumn]:
    known = unit_metrics(unit.kind)
    if not requested:
        return known
    names = list(dict.fromkeys(m.strip() for m in requested if m.strip()))
    unknown = [m for m in names if m not in known]
    if unknown:
        listed = ", ".join(repr(m) for m in unknown)
        message = (
            f"unknown metric {listed} for unit {unit.slug!r} (kind {unit.kind}); "
            f"known: {', '.join(known)}"
        )
        raise InvalidInput(message, errors=[{"field": "metrics", "message": message}])
    if not names:
        return known
    return {m: known[m] for m in names}


def _range(
    session: Session, unit: UnitRef, start: dt.datetime | None, end: dt.datetime | None
) -> tuple[int, int]:
    if end is None:
        latest = _latest_t(session, unit.id)
        end_ms = (
            latest + unit.interval_ms
            if latest is not None
            else (to_ms(dt.datetime.now(dt.UTC)) // unit.interval_ms + 1) * unit.interval_ms
        )
    else:
        end_ms = to_ms(end)
    start_ms = end_ms - int(DEFAULT_RANGE.total_seconds() * 1000) if start is None else to_ms(start)
    if start_ms >= end_ms:
        message = f"start ({rfc3339(start_ms)}) must be before end ({rfc3339(end_ms)})"
        raise InvalidInput(
            message,
            errors=[{"field": "start", "message": message}, {"field": "end", "message": message}],
        )
    return start_ms, end_ms


def query_results(
    *,
    session: Session,
    unit_slug: str,
    start: dt.datetime | None = None,
    end: dt.datetime | None = None,
    metrics: list[str] | None = None,
    unit_system: UnitSystem | str = UnitSystem.SI,
    max_points: int = DEFAULT_MAX_POINTS,
) -> ResultSet:
    """Series of a unit's metrics over [start, end), at most ``max_points`` per series.

    Raises NotFound for an unknown unit, InvalidInput for an unknown metric, a range
    whose start is not before its end, or ``max_points`` out of bounds.
    """
    if not MIN_MAX_POINTS <= max_points <= MAX_MAX_POINTS:
        message = (
            f"max_points must be between {MIN_MAX_POINTS} and {MAX_MAX_POINTS}, got {max_points}"
        )
        raise InvalidInput(message, errors=[{"field": "max_points", "message": message}])
    system = UnitSystem(unit_system)
    unit = get_unit_ref(session, unit_slug)
    chosen = resolve_metrics(unit, metrics)
    start_ms, end_ms = _range(session, unit, start, end)
    bucket = choose_bucket_ms(start_ms, end_ms, unit.interval_ms, max_points)
    out = ResultSet(unit.slug, start_ms, end_ms, system, bucket)
    floats = [m for m in chosen if m not in BIT_OR_METRICS]
    bits = [m for m in chosen if m in BIT_OR_METRICS]
    fetched: dict[str, tuple[np.ndarray, ...]] = {}
    if bucket is None:
        fetched.update(_raw(session, unit.id, list(chosen), start_ms, end_ms))
    else:
        fetched.update(_bucketed(session, unit, floats, start_ms, end_ms, bucket))
        for metric in bits:
            fetched[metric] = _bucketed_bit_or(session, unit, metric, start_ms, end_ms, bucket)
    for metric, column in chosen.items():
        t, mean, low, high, count = fetched.get(metric, _EMPTY)
        aggregate = "bit_or" if metric in BIT_OR_METRICS else "mean"
        unit_text = column.unit
        if aggregate == "mean":
            mean, unit_text = measure.convert_series(mean, column.unit, system.value)
            low, _ = measure.convert_series(low, column.unit, system.value)
            high, _ = measure.convert_series(high, column.unit, system.value)
        out.series.append(
            SeriesData(
                metric,
                unit_text,
                label(column),
                aggregate,
                t,
                np.asarray(mean, float),
                np.asarray(low, float),
                np.asarray(high, float),
                count,
            )
        )
    return out


_EMPTY = (np.empty(0, np.int64), *(np.empty(0) for _ in range(3)), np.empty(0, np.int64))


def _split(rows: Sequence[Any], metrics: list[str]) -> dict[str, tuple[np.ndarray, ...]]:
    """Rows (metric, t, mean, min, max, count) sorted by metric -> arrays per metric."""
    if not rows:
        return {}
    names = np.array([r[0] for r in rows], dtype=object)
    t = np.fromiter((r[1] for r in rows), dtype=np.int64, count=len(rows))
    cols = [np.array([r[i] for r in rows], dtype=float) for i in (2, 3, 4)]  # None -> nan
    count = np.fromiter((r[5] for r in rows), dtype=np.int64, count=len(rows))
    out = {}
    for metric in metrics:
        mask = names == metric
        if mask.any():
            out[metric] = (t[mask], *(c[mask] for c in cols), count[mask])
    return out


def _raw(
    session: Session, unit_id: int, metrics: list[str], start_ms: int, end_ms: int
) -> dict[str, tuple[np.ndarray, ...]]:
    if not metrics:
        return {}
    rows = session.execute(
        text(
            "SELECT metric, t_ms, value, value, value, "
            "CASE WHEN value IS NULL THEN 0 ELSE 1 END "
            "FROM results WHERE unit_id = :u AND metric IN :metrics "
            "AND t_ms >= :s AND t_ms < :e ORDER BY metric, t_ms"
        ).bindparams(bindparam("metrics", expanding=True)),
        {"u": unit_id, "metrics": metrics, "s": start_ms, "e": end_ms},
    ).all()
    return _split(rows, metrics)


def _segments(start_ms: int, end_ms: int, level: int | None) -> list[tuple[str, int, int]]:
    """[start, end) as (source, lo, hi): whole rollup blocks from the rollups, the partial
    blocks at either end from the results."""
    if level is None:
        return [("results", start_ms, end_ms)]
    lo = -(-start_ms // level) * level
    hi = (end_ms // level) * level
    if lo >= hi:
        return [("results", start_ms, end_ms)]
    parts = [("rollups", lo, hi)]
    if start_ms < lo:
        parts.append(("results", start_ms, lo))
    if hi < end_ms:
        parts.append(("results", hi, end_ms))
    return parts


_BUCKET = "(t_ms / CAST(:b AS BIGINT)) * CAST(:b AS BIGINT)"
_FLOAT_SQL = {
    "results": (
        f"SELECT metric, {_BUCKET} AS k, sum(value), count(value), min(value), max(value) "
        "FROM results WHERE unit_id = :u AND metric IN :metrics "
        "AND t_ms >= :s AND t_ms < :e GROUP BY metric, k"
    ),
    "rollups": (
        f"SELECT metric, {_BUCKET} AS k, sum(total), sum(n), min(low), max(high) "
        "FROM result_rollups WHERE unit_id = :u AND level_ms = :lv AND metric IN :metrics "
        "AND t_ms >= :s AND t_ms < :e GROUP BY metric, k"
    ),
}
_WHERE = "unit_id = :u AND metric = :m AND t_ms >= :s AND t_ms < :e"
_BITS_SQL = {
    ("postgresql", "results"): (
        f"SELECT {_BUCKET} AS k, bit_or(CAST(value AS bigint)), count(value) "
        f"FROM results WHERE {_WHERE} GROUP BY k"
    ),
    ("postgresql", "rollups"): (
        f"SELECT {_BUCKET} AS k, bit_or(bits), sum(n) "
        f"FROM result_rollups WHERE level_ms = :lv AND {_WHERE} GROUP BY k"
    ),
    # SQLite has no bitwise aggregate: group by the (few) distinct values, OR in numpy.
    ("sqlite", "results"): (
        f"SELECT {_BUCKET} AS k, CAST(value AS INTEGER) AS v, count(value) "
        f"FROM results WHERE {_WHERE} GROUP BY k, v"
    ),
    ("sqlite", "rollups"): (
        f"SELECT {_BUCKET} AS k, bits, sum(n) "
        f"FROM result_rollups WHERE level_ms = :lv AND {_WHERE} GROUP BY k, bits"
    ),
}


def _bucketed(
    session: Session,
    unit: UnitRef,
    metrics: list[str],
    start_ms: int,
    end_ms: int,
    bucket: int,
) -> dict[str, tuple[np.ndarray, ...]]:
    """Per metric: bucket starts, mean, min, max, count (sums and counts of the parts
    combined exactly)."""
    if not metrics:
        return {}
    level = rollup_level(bucket, unit.interval_ms)
    rows: list = []
    for source, lo, hi in _segments(start_ms, end_ms, level):
        rows += session.execute(
            sql(_FLOAT_SQL[source]),
            {"u": unit.id, "metrics": metrics, "s": lo, "e": hi, "b": bucket, "lv": level},
        ).all()
    if not rows:
        return {}
    return _combine(rows, metrics)


def _combine(rows: list, metrics: list[str]) -> dict[str, tuple[np.ndarray, ...]]:
    """Partial aggregates (metric, k, sum, count, min, max) -> one per (metric, k)."""
    # Column by column: indexing rows is far faster than unpacking them with zip(*rows).
    names, k, total, n, low, high = ([r[i] for r in rows] for i in range(6))
    position = {m: i for i, m in enumerate(metrics)}
    midx = np.fromiter((position[m] for m in names), np.int64, len(names))
    k_arr = np.asarray(k, dtype=np.int64)
    order = np.lexsort((k_arr, midx))
    midx, k_arr = midx[order], k_arr[order]
    total_arr = np.nan_to_num(np.asarray(total, dtype=float)[order])  # NULL sum: no values
    n_arr = np.asarray(n, dtype=np.int64)[order]
    low_arr = np.asarray(low, dtype=float)[order]
    high_arr = np.asarray(high, dtype=float)[order]
    starts = np.flatnonzero(np.r_[True, (midx[1:] != midx[:-1]) | (k_arr[1:] != k_arr[:-1])])
    count = np.add.reduceat(n_arr, starts)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.where(count > 0, np.add.reduceat(total_arr, starts) / count, np.nan)
    lows = np.fmin.reduceat(low_arr, starts)
    highs = np.fmax.reduceat(high_arr, starts)
    group_metric = midx[starts]
    out: dict[str, tuple[np.ndarray, ...]] = {}
    for i, metric in enumerate(metrics):
        mask = group_metric == i
        if mask.any():
            out[metric] = (k_arr[starts][mask], mean[mask], lows[mask], highs[mask], count[mask])
    return out


def _bucketed_bit_or(
    session: Session, unit: UnitRef, metric: str, start_ms: int, end_ms: int, bucket: int
) -> tuple[np.ndarray, ...]:
    dialect = "postgresql" if session.get_bind().dialect.name == "postgresql" else "sqlite"
    level = rollup_level(bucket, unit.interval_ms)
    rows: list = []
    for source, lo, hi in _segments(start_ms, end_ms, level):
        rows += session.execute(
            text(_BITS_SQL[(dialect, source)]),
            {"u": unit.id, "m": metric, "s": lo, "e": hi, "b": bucket, "lv": level},
        ).all()
    if not rows:
        return _EMPTY
    rows.sort(key=lambda r: r[0])
    k = np.fromiter((r[0] for r in rows), np.int64, len(rows))
    bits = np.fromiter((0 if r[1] is None else r[1] for r in rows), np.int64, len(rows))
    counts = np.fromiter((r[2] for r in rows), np.int64, len(rows))
    starts = np.flatnonzero(np.r_[True, k[1:] != k[:-1]])
    ored = np.bitwise_or.reduceat(bits, starts).astype(float)
    count = np.add.reduceat(counts, starts)
    ored[count == 0] = np.nan
    return k[starts], ored, ored.copy(), ored.copy(), count


def _latest_t(session: Session, unit_id: int) -> int | None:
    # Every computed interval has a flags row, and the primary key (unit, metric, t)
    # answers this from the index.
    value = session.scalar(
        text("SELECT max(t_ms) FROM results WHERE unit_id = :u AND metric = :m"),
        {"u": unit_id, "m": FLAGS_METRIC},
    )
    return None if value is None else int(value)


@dataclass
class Latest:
    t_ms: int | None
    values: dict[str, float | None]
    units: dict[str, str]


def latest(
    *, session: Session, unit_slug: str, unit_system: UnitSystem | str = UnitSystem.SI
) -> Latest:
    """The unit's most recent computed interval, every metric, in the output units."""
    system = UnitSystem(unit_system)
    unit = get_unit_ref(session, unit_slug)
    known = unit_metrics(unit.kind)
    t = _latest_t(session, unit.id)
    if t is None:
        return Latest(None, {}, {})
    rows: dict[str, float | None] = dict(
        session.execute(
            text(
                "SELECT metric, value FROM results WHERE unit_id = :u AND t_ms = :t "
                "AND metric IN :metrics"
            ).bindparams(bindparam("metrics", expanding=True)),
            {"u": unit.id, "t": t, "metrics": list(known)},
        ).all()
    )
    values: dict[str, float | None] = {}
    units: dict[str, str] = {}
    for metric, column in known.items():
        if metric not in rows:
            continue
        raw = rows[metric]
        if metric in BIT_OR_METRICS:
            values[metric] = None if raw is None else float(raw)
            units[metric] = column.unit
            continue
        converted, unit_text = measure.convert_series(
            np.nan if raw is None else float(raw), column.unit, system.value
        )
        values[metric] = None if math.isnan(converted) else float(converted)
        units[metric] = unit_text
    return Latest(t, values, units)


def list_metrics(*, session: Session, unit_slug: str) -> tuple[UnitRef, list[dict[str, str]]]:
    """The unit and its metrics: name, SI unit, US customary unit, label, description."""
    unit = get_unit_ref(session, unit_slug)
    items = [
        {
            "metric": name,
            "unit": column.unit,
            "us_unit": measure.display_unit(column.unit, UnitSystem.US.value),
            "label": label(column),
            "description": column.description,
            "aggregate": "bit_or" if name in BIT_OR_METRICS else "mean",
        }
        for name, column in unit_metrics(unit.kind).items()
    ]
    return unit, items
