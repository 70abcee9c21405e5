"""Baselines: fit a version on a reference period, list, compare, activate; drift summary.

A fit reads the unit's stored results over the period, judges every interval steady or
not (the kind's limits, or the request's), and fits ``engine.baseline.fit_baseline`` on
the steady intervals without quality flags. Each fit is a new version (numbered per
unit) with its statistics, coefficients, settings and demonstrated-best table.

Activation makes a version the one active baseline of its (unit, metric) and queues the
unit's span from ``recompute_from`` (default: the reference period's start) to its last
reading for the pipeline, which recomputes it chunk by chunk in time order; the stage
(:mod:`api.baselines.stage`) writes expected values, drift and charts as it goes. The
charts start afresh at ``recompute_from``.
"""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Sequence
from dataclasses import asdict, dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from sqlalchemy import exists, func, select, update
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from api.baselines import charts
from api.baselines import metrics as names
from api.baselines.data import (
    ambient_temperature,
    computed,
    grid,
    load_frame,
    steady_flags,
    steady_reasons,
)
from api.baselines.kinds import STEADY_WINDOW_S, profile, window_intervals
from api.baselines.models import Baseline, ChartCheckpoint, DriftEvent
from api.baselines.problems import (
    BaselineConflict,
    NoSteadyIntervals,
    NotFittable,
    TooFewIntervals,
    UnknownMetric,
)
from api.core.db import lock_for_write, utcnow
from api.core.problems import InvalidInput, NotFound
from api.pipeline.quality import FLAGS_METRIC
from api.plants.models import Unit
from api.plants.service import UnitConfig, get_unit, load_unit_config
from api.readings.dirty import mark_units_dirty, reading_range
from api.results.models import ResultValue
from api.results.service import choose_bucket_ms, rfc3339
from engine import baseline as engine_baseline
from engine.catalogue import all_kinds
from engine.cost import cumulative
from engine.headroom import demonstrated_best
from engine.steady import SteadyLimit

RECOMPUTE_REASON = "baseline"
"""``work_spans.reason`` of the spans an activation queues."""


@dataclass
class FitRequest:
    """What to fit (times as UTC epoch ms; see :class:`api.baselines.schemas.BaselineCreate`)."""

    metric: str
    start_ms: int
    end_ms: int
    regressors: Sequence[str] = ()
    load: str | None = None
    forms: Sequence[str] | None = None
    granularity: str = "hourly"
    confidence: float = 0.95
    steady_window_s: float = STEADY_WINDOW_S
    steady_limits: Sequence[SteadyLimit] | None = None
    chart: dict[str, float | None] = field(default_factory=dict)
    note: str | None = None
    activate: bool = False
    recompute_from_ms: int | None = None


@dataclass
class RecomputeInfo:
    start_ms: int
    end_ms: int | None
    intervals: int


def iso(t_ms: int) -> str:
    return str(rfc3339(int(t_ms)))


def to_ms(moment: dt.datetime, field_name: str) -> int:
    if moment.tzinfo is None:
        message = (
            f"{field_name}: time {moment.isoformat()} has no UTC offset; add 'Z' or '+hh:mm' "
            "(RFC 3339)"
        )
        raise InvalidInput(message, errors=[{"field": field_name, "message": message}])
    return int(round(moment.timestamp() * 1000))


# --------------------------------------------------------------------------- checks


def _results_of(kind_name: str) -> list[str]:
    kind = all_kinds().get(kind_name)
    return [c.name for c in kind.results] if kind else []


def _unknown(what: str, name: str, field_name: str, unit: Unit, known: list[str]) -> UnknownMetric:
    message = (
        f"unknown {what} {name!r} for unit {unit.slug!r} (kind {unit.kind}); "
        f"known: {', '.join(known)}"
    )
    return UnknownMetric(message, errors=[{"field": field_name, "message": message}], known=known)


def _check_columns(
    unit: Unit, config: UnitConfig, request: FitRequest
) -> tuple[str, list[str], list[str]]:
    """(load, other regressors, known result names), or a problem naming the field."""
    known = _results_of(unit.kind)
    if request.metric not in known:
        raise _unknown("metric", request.metric, "metric", unit, known)
    load = request.load or profile(unit.kind).load
    if load is None:
        message = f"kind {unit.kind} names no load column; give 'load' (one of: {', '.join(known)})"
        raise NotFittable(message, errors=[{"field": "load", "message": message}])
    if load not in known:
        raise _unknown("load column", load, "load", unit, known)
    if load == request.metric:
        message = f"the load {load!r} cannot be the metric modelled"
        raise NotFittable(message, errors=[{"field": "load", "message": message}])
    others: list[str] = []
    for i, name in enumerate(request.regressors):
        where = f"regressors[{i}]"
        if name in names.AMBIENT_ALIASES:
            if config.ambient_tag_id is None:
                message = (
                    f"{where}: the plant of {unit.slug!r} has no ambient tag, so there is no "
                    "per-interval ambient temperature (name one as dead_state.ambient_tag in "
                    "the plant file)"
                )
                raise NotFittable(message, errors=[{"field": where, "message": message}])
            name = names.AMBIENT
        elif name not in known:
            raise _unknown("regressor", name, where, unit, [*known, "ambient_temperature"])
        if name not in others and name != load:
            others.append(name)
    if request.start_ms >= request.end_ms:
        message = f"start ({iso(request.start_ms)}) must be before end ({iso(request.end_ms)})"
        raise InvalidInput(
            message,
            errors=[{"field": "start", "message": message}, {"field": "end", "message": message}],
        )
    for limit in request.steady_limits or ():
        if limit.column not in known:
            raise _unknown("steady-state column", limit.column, "steady.limits", unit, known)
    return load, others, known


# --------------------------------------------------------------------------- fitting


def _lock_unit(session: Session, unit_id: int) -> None:
    """Serialise baseline writers of one unit (version numbers, the active flag)."""
    if session.get_bind().dialect.name == "postgresql":
        session.execute(select(Unit.id).where(Unit.id == unit_id).with_for_update())
    else:
        lock_for_write(session)


def fit(
    *, session: Session, unit_slug: str, request: FitRequest, created_by: str | None = None
) -> tuple[Baseline, RecomputeInfo | None]:
    """Fit a new baseline version of ``request.metric`` on the reference period and
    store it (activated at once with ``request.activate``). Commits.

    Raises NotFound (unit), UnknownMetric, NotFittable, NoSteadyIntervals,
    TooFewIntervals, InvalidInput.
    """
    unit = get_unit(session=session, slug=unit_slug)
    config = load_unit_config(session=session, unit_id=unit.id)
    load, others, known = _check_columns(unit, config, request)
    prof = profile(unit.kind)
    limits = tuple(request.steady_limits or prof.steady)
    interval_ms = config.interval_seconds * 1000
    window = window_intervals(config.interval_seconds, request.steady_window_s)
    start, end = request.start_ms, request.end_ms
    lo = start - (window - 1) * interval_ms
    wanted = [FLAGS_METRIC, request.metric, load, *others, *(lim.column for lim in limits)]
    if "eta_2" in known:
        wanted.append("eta_2")
    stored = load_frame(session, unit.id, [w for w in wanted if w != names.AMBIENT], lo, end)
    data = stored.reindex(grid(lo, end, interval_ms))
    if names.AMBIENT in others:
        ambient = ambient_temperature(session, config, lo, end)
        assert ambient is not None  # checked: the plant has an ambient tag
        data[names.AMBIENT] = ambient.reindex(data.index).to_numpy()
    steady = steady_flags(data, limits, load, window)
    done = computed(stored)
    rows = stored.index[done.to_numpy() & (stored.index >= start)]
    period = f"{iso(start)} to {iso(end)}"
    if len(rows) == 0:
        raise NoSteadyIntervals(
            f"unit {unit.slug!r} has no computed intervals from {period}: nothing was "
            "computed there (no readings, or the pipeline has not run yet)",
            intervals=0,
            steady=0,
            flagged=0,
        )
    flags = data[FLAGS_METRIC].reindex(rows).to_numpy(dtype=float)
    is_steady = steady.reindex(rows).to_numpy(dtype=bool)
    clean = flags == 0
    usable = is_steady & clean
    counts = {
        "intervals": int(len(rows)),
        "steady": int(is_steady.sum()),
        "flagged": int((~clean).sum()),
    }
    if not usable.any():
        reasons = steady_reasons(data, limits, load, window, rows, config.interval_seconds)
        flagged_steady = int((is_steady & ~clean).sum())
        detail = (
            f"none of the {counts['intervals']} computed intervals of unit {unit.slug!r} from "
            f"{period} was steady and free of quality flags: "
            f"{counts['intervals'] - counts['steady']} were not steady ("
            + "; ".join(reasons)
            + f"), and {counts['flagged']} carried quality flags"
            + (f" ({flagged_steady} of them steady)" if flagged_steady else "")
        )
        raise NoSteadyIntervals(
            detail,
            reasons=reasons,
            intervals=counts["intervals"],
            steady=counts["steady"],
            flagged=counts["flagged"],
        )
    series = data[request.metric].reindex(rows).rename(request.metric)
    regressors = data.reindex(index=rows, columns=[load, *others])
    try:
        model = engine_baseline.fit_baseline(
            series,
            regressors,
            load=load,
            mask=usable,
            forms=tuple(request.forms or engine_baseline.FORMS),
            granularity=request.granularity,
            confidence=request.confidence,
        )
    except ValueError as exc:
        finite = np.isfinite(series.to_numpy(dtype=float)) & np.isfinite(
            regressors.to_numpy(dtype=float)
        ).all(axis=1)
        n_usable = int((usable & finite).sum())
        text = str(exc)
        if "do not vary" in text:
            raise NotFittable(
                f"unit {unit.slug!r}, {period}: {text}",
                errors=[{"field": "regressors", "message": text}],
            ) from None
        raise TooFewIntervals(
            f"unit {unit.slug!r}, {period}: {n_usable} usable intervals (steady, without "
            f"quality flags, with {request.metric!r} and every regressor) of "
            f"{counts['intervals']}: {text}",
            usable=n_usable,
            intervals=counts["intervals"],
            steady=counts["steady"],
            flagged=counts["flagged"],
        ) from None
    counts["usable"] = model.n
    best = None
    if "eta_2" in known:
        try:
            best = demonstrated_best(
                data["eta_2"].reindex(rows),
                data[load].reindex(rows).rename(load),
                mask=usable,
                load_range=model.ranges[0],
            ).to_dict()
        except ValueError:
            best = None  # no usable eta_2, or load never varied: no headroom reference
    chart = charts.default_chart(config.interval_seconds, **request.chart)
    settings = {
        "interval_seconds": config.interval_seconds,
        "steady": {
            "window_seconds": float(request.steady_window_s),
            "window_intervals": window,
            "limits": [asdict(lim) for lim in limits],
            "kind_default": request.steady_limits is None,
        },
        "chart": chart.to_dict(),
        "counts": counts,
    }
    _lock_unit(session, unit.id)
    version = (
        session.scalar(select(func.max(Baseline.version)).where(Baseline.unit_id == unit.id)) or 0
    ) + 1
    row = Baseline(
        unit_id=unit.id,
        version=version,
        metric=request.metric,
        load=load,
        regressors=list(model.regressors),
        start_ms=start,
        end_ms=end,
        model=model.to_dict(),
        best=best,
        settings=settings,
        note=request.note,
        active=False,
        created_by=created_by,
        created_at=utcnow(),
    )
    session.add(row)
    try:
        session.flush()
    except IntegrityError:
        session.rollback()
        raise BaselineConflict(
            f"another baseline of unit {unit.slug!r} was stored at the same moment; try again"
        ) from None
    recompute = None
    if request.activate:
        recompute = _activate(session, unit, config, row, created_by, request.recompute_from_ms)
    session.commit()
    return row, recompute


# --------------------------------------------------------------------------- reading


def list_baselines(
    *, session: Session, unit_slug: str, metric: str | None = None
) -> tuple[Unit, list[Baseline]]:
    unit = get_unit(session=session, slug=unit_slug)
    query = select(Baseline).where(Baseline.unit_id == unit.id)
    if metric:
        query = query.where(Baseline.metric == metric)
    return unit, list(session.scalars(query.order_by(Baseline.version)))


def get_baseline(*, session: Session, unit_slug: str, version: int) -> tuple[Unit, Baseline]:
    unit = get_unit(session=session, slug=unit_slug)
    row = session.scalars(
        select(Baseline).where(Baseline.unit_id == unit.id, Baseline.version == version)
    ).one_or_none()
    if row is None:
        raise NotFound(f"unit {unit.slug!r} has no baseline version {version}")
    return unit, row


# --------------------------------------------------------------------------- activation


def _activate(
    session: Session,
    unit: Unit,
    config: UnitConfig,
    row: Baseline,
    by: str | None,
    recompute_from_ms: int | None,
) -> RecomputeInfo:
    interval_ms = config.interval_seconds * 1000
    origin = row.start_ms if recompute_from_ms is None else recompute_from_ms
    origin = (origin // interval_ms) * interval_ms
    _lock_unit(session, unit.id)
    session.execute(
        update(Baseline)
        .where(
            Baseline.unit_id == unit.id,
            Baseline.metric == row.metric,
            Baseline.active.is_(True),
            Baseline.id != row.id,
        )
        .values(active=False)
    )
    session.flush()
    row.active = True
    row.activated_at = utcnow()
    row.activated_by = by
    row.chart_origin_ms = origin
    session.flush()
    charts.reset(session, row, unit.id, origin)
    tags = set(config.bindings.values()) | (
        {config.ambient_tag_id} if config.ambient_tag_id else set()
    )
    stored = reading_range(session=session, tag_ids=tags)
    if stored is None or stored[1] < origin:
        return RecomputeInfo(origin, None, 0)
    end = (stored[1] // interval_ms + 1) * interval_ms
    mark_units_dirty(session=session, spans=[(unit.id, origin, end)], reason=RECOMPUTE_REASON)
    return RecomputeInfo(origin, end, (end - origin) // interval_ms)


def activate(
    *,
    session: Session,
    unit_slug: str,
    version: int,
    activated_by: str | None = None,
    recompute_from_ms: int | None = None,
) -> tuple[Baseline, RecomputeInfo]:
    """Make ``version`` the active baseline of its metric and queue the recompute from
    ``recompute_from_ms`` (default: its reference period's start). Commits."""
    unit, row = get_baseline(session=session, unit_slug=unit_slug, version=version)
    config = load_unit_config(session=session, unit_id=unit.id)
    info = _activate(session, unit, config, row, activated_by, recompute_from_ms)
    try:
        session.commit()
    except IntegrityError:
        session.rollback()
        raise BaselineConflict(
            f"another baseline of {row.metric!r} on unit {unit.slug!r} was activated at the "
            "same moment; try again"
        ) from None
    return row, info


# --------------------------------------------------------------------------- comparing


@dataclass
class SideResult:
    row: Baseline
    model: engine_baseline.Baseline
    fit: engine_baseline.FitStatistics
    extrapolated: int
    mean_expected: float


@dataclass
class ComparisonResult:
    unit: Unit
    metric: str
    start_ms: int
    end_ms: int
    a: SideResult
    b: SideResult
    difference: dict[str, Any]
    bucket_ms: int | None
    t_ms: np.ndarray
    actual: np.ndarray
    expected_a: np.ndarray
    expected_b: np.ndarray


def _nanmean(values: np.ndarray) -> float:
    finite = values[np.isfinite(values)]
    return float(finite.mean()) if finite.size else math.nan


def _buckets(
    t: np.ndarray,
    columns: list[np.ndarray],
    span: tuple[int, int],
    interval_ms: int,
    max_points: int,
) -> tuple[int | None, np.ndarray, list[np.ndarray]]:
    """Bucket means (NaN-skipping) on the results API's epoch-aligned buckets
    (:func:`api.results.service.choose_bucket_ms`) when the range holds more intervals
    than ``max_points``."""
    bucket = choose_bucket_ms(span[0], span[1], interval_ms, max_points)
    if bucket is None or len(t) == 0:
        return None, t, columns
    keys = (t // bucket) * bucket
    frame = pd.DataFrame({i: c for i, c in enumerate(columns)})
    means = frame.groupby(keys).mean()
    return bucket, means.index.to_numpy(dtype=np.int64), [means[i].to_numpy() for i in means]


def compare(
    *,
    session: Session,
    unit_slug: str,
    a: int,
    b: int,
    start_ms: int | None = None,
    end_ms: int | None = None,
    max_points: int = 500,
) -> ComparisonResult:
    """Two versions of the same metric side by side: their fit statistics, and their
    predictions and Guideline 14 statistics over a period (default: from the earlier
    reference period's start to the later one's end)."""
    unit, row_a = get_baseline(session=session, unit_slug=unit_slug, version=a)
    _, row_b = get_baseline(session=session, unit_slug=unit_slug, version=b)
    if row_a.metric != row_b.metric:
        message = (
            f"versions {a} ({row_a.metric}) and {b} ({row_b.metric}) model different metrics; "
            "compare versions of the same metric"
        )
        raise InvalidInput(message, errors=[{"field": "b", "message": message}])
    start = min(row_a.start_ms, row_b.start_ms) if start_ms is None else start_ms
    end = max(row_a.end_ms, row_b.end_ms) if end_ms is None else end_ms
    if start >= end:
        message = f"start ({iso(start)}) must be before end ({iso(end)})"
        raise InvalidInput(message, errors=[{"field": "start", "message": message}])
    config = load_unit_config(session=session, unit_id=unit.id)
    interval_ms = config.interval_seconds * 1000
    models = [engine_baseline.Baseline.from_dict(r.model) for r in (row_a, row_b)]
    regressors = list(dict.fromkeys(r for m in models for r in m.regressors))
    prof = profile(unit.kind)
    window = window_intervals(config.interval_seconds)
    lo = start - (window - 1) * interval_ms
    wanted = [FLAGS_METRIC, row_a.metric, *regressors, *prof.steady_columns()]
    if prof.load:
        wanted.append(prof.load)
    stored = load_frame(session, unit.id, [w for w in wanted if w != names.AMBIENT], lo, end)
    data = stored.reindex(grid(lo, end, interval_ms))
    if names.AMBIENT in regressors:
        ambient = ambient_temperature(session, config, lo, end)
        data[names.AMBIENT] = np.nan if ambient is None else ambient.reindex(data.index).values
    steady = steady_flags(data, prof.steady, prof.load, window)
    rows = stored.index[computed(stored).to_numpy() & (stored.index >= start)]
    actual = data[row_a.metric].reindex(rows).to_numpy(dtype=float)
    usable = steady.reindex(rows).to_numpy(dtype=bool) & (
        data[FLAGS_METRIC].reindex(rows).to_numpy(dtype=float) == 0
    )
    sides, expected = [], []
    for row, model in zip((row_a, row_b), models, strict=True):
        frame = data.reindex(index=rows, columns=list(model.regressors))
        prediction = engine_baseline.predict(model, frame)
        values = prediction["expected"].to_numpy(dtype=float)
        expected.append(values)
        fit = engine_baseline.goodness_of_fit(np.where(usable, actual, np.nan), values, model.p)
        sides.append(
            SideResult(row, model, fit, int(prediction["extrapolated"].sum()), _nanmean(values))
        )
    both = np.isfinite(expected[0]) & np.isfinite(expected[1])
    diff = expected[1][both] - expected[0][both]
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = diff / expected[0][both]
    difference = {
        "n": int(both.sum()),
        "mean": float(diff.mean()) if diff.size else None,
        "mean_rel": float(np.nanmean(rel)) if rel.size else None,
        "max_abs": float(np.abs(diff).max()) if diff.size else None,
    }
    bucket, t, (act, ea, eb) = _buckets(
        rows.to_numpy(dtype=np.int64), [actual, *expected], (start, end), interval_ms, max_points
    )
    return ComparisonResult(
        unit, row_a.metric, start, end, sides[0], sides[1], difference, bucket, t, act, ea, eb
    )


# --------------------------------------------------------------------------- drift summary


@dataclass
class MetricState:
    row: Baseline
    current_t_ms: int | None
    actual: float | None
    expected: float | None
    drift: float | None
    drift_rel: float | None
    checkpoint: ChartCheckpoint | None
    alarms: int
    last_alarm: DriftEvent | None
    episode: Episode | None = None


@dataclass
class Episode:
    """The uninterrupted series of same-side CUSUM alarms the last alarm belongs to."""

    side: str
    shift_start_ms: int | None
    """Where the first alarm's run began: the shift began there."""
    first_alarm_ms: int
    alarms: int
    complete: bool
    """False when the series reaches back beyond :data:`EPISODE_LOOKBACK_MS`."""


EPISODE_LOOKBACK_MS = 31 * 86_400_000
"""Furthest back the alarm series of an episode is followed. [ms]"""


def episode_of(session: Session, row: Baseline, last: DriftEvent) -> Episode:
    """Follow the last alarm's series back: with the chart reset at every alarm, a shift
    that persists alarms again and again, each new run beginning at the very first
    observed interval after the previous alarm. The series ends (going back) at an alarm
    on the other side or at a run that began later than that: the chart had come back
    to zero in between."""
    lower = last.alarm_ms - EPISODE_LOOKBACK_MS
    events = session.execute(
        select(DriftEvent.alarm_ms, DriftEvent.side, DriftEvent.shift_start_ms)
        .where(
            DriftEvent.unit_id == last.unit_id,
            DriftEvent.metric == last.metric,
            DriftEvent.baseline_id == row.id,
            DriftEvent.alarm_ms >= lower,
            DriftEvent.alarm_ms <= last.alarm_ms,
        )
        .order_by(DriftEvent.alarm_ms)
    ).all()
    first = len(events) - 1
    if first > 0:
        drift_name = names.metric_names(row.metric)["drift"]
        data = load_frame(
            session,
            last.unit_id,
            [drift_name, names.STEADY, FLAGS_METRIC],
            int(events[0].alarm_ms),
            int(last.alarm_ms) + 1,
        )
        seen = charts.observed(data[names.STEADY].to_numpy(), data[FLAGS_METRIC].to_numpy())
        seen &= np.isfinite(data[drift_name].to_numpy(dtype=float))
        times = data.index.to_numpy(dtype=np.int64)[seen]
        while first > 0:
            prev, cur = events[first - 1], events[first]
            after = int(np.searchsorted(times, prev.alarm_ms, side="right"))
            if prev.side != last.side or after >= len(times) or cur.shift_start_ms != times[after]:
                break
            first -= 1
    return Episode(
        side=last.side,
        shift_start_ms=events[first].shift_start_ms,
        first_alarm_ms=int(events[first].alarm_ms),
        alarms=len(events) - first,
        complete=first > 0 or not _alarms_before(session, row, last, lower),
    )


def _alarms_before(session: Session, row: Baseline, last: DriftEvent, t_ms: int) -> bool:
    return bool(
        session.scalar(
            select(
                exists().where(
                    DriftEvent.unit_id == last.unit_id,
                    DriftEvent.metric == last.metric,
                    DriftEvent.baseline_id == row.id,
                    DriftEvent.alarm_ms < t_ms,
                )
            )
        )
    )


@dataclass
class Summary:
    unit: Unit
    start_ms: int
    end_ms: int
    currency: str | None
    fuel_price_per_gj: float | None
    cost_metric: str | None
    totals: dict[str, float | None]
    headroom_cost: float | None
    metrics: list[MetricState]


def _number(value: float) -> float | None:
    return float(value) if value is not None and math.isfinite(value) else None


def _latest_result(session: Session, unit_id: int) -> int | None:
    value = session.scalar(
        select(func.max(ResultValue.t_ms)).where(
            ResultValue.unit_id == unit_id, ResultValue.metric == FLAGS_METRIC
        )
    )
    return None if value is None else int(value)


def drift_summary(
    *,
    session: Session,
    unit_slug: str,
    start_ms: int | None = None,
    end_ms: int | None = None,
) -> Summary:
    """What the drift cost over [start, end) (default: the day up to the latest result),
    and where each active baseline's drift and CUSUM stand."""
    unit = get_unit(session=session, slug=unit_slug)
    config = load_unit_config(session=session, unit_id=unit.id)
    interval_ms = config.interval_seconds * 1000
    if end_ms is None:
        latest = _latest_result(session, unit.id)
        end_ms = (latest + interval_ms) if latest is not None else int(utcnow().timestamp() * 1000)
    if start_ms is None:
        start_ms = end_ms - 86_400_000
    if start_ms >= end_ms:
        message = f"start ({iso(start_ms)}) must be before end ({iso(end_ms)})"
        raise InvalidInput(message, errors=[{"field": "start", "message": message}])
    active = list(
        session.scalars(
            select(Baseline)
            .where(Baseline.unit_id == unit.id, Baseline.active.is_(True))
            .order_by(Baseline.metric)
        )
    )
    per_metric = []
    for row in active:
        col = names.metric_names(row.metric)
        per_metric += [row.metric, col["expected"], col["drift"], col["drift_rel"]]
    wanted = [names.EXTRA_FUEL, names.COST, names.CO2, names.HEADROOM_COST, *per_metric]
    data = load_frame(session, unit.id, wanted, start_ms, end_ms)
    cost = pd.DataFrame(
        {
            "extra_fuel_w": data[names.EXTRA_FUEL],
            "cost_per_h": data[names.COST],
            "co2_kg_per_h": data[names.CO2],
        }
    )
    interval_s = config.interval_seconds
    if len(cost):
        total = cumulative(cost, float(interval_s)).iloc[-1]
        has = {c: bool(cost[c].notna().any()) for c in cost}
        totals = {
            "extra_fuel_j": float(total["extra_fuel_j"]) if has["extra_fuel_w"] else None,
            "cost": float(total["cost"]) if has["cost_per_h"] else None,
            "co2_kg": float(total["co2_kg"]) if has["co2_kg_per_h"] else None,
            "counted_seconds": float(total["counted_s"]),
        }
    else:
        totals = {"extra_fuel_j": None, "cost": None, "co2_kg": None, "counted_seconds": 0.0}
    totals["range_seconds"] = (end_ms - start_ms) / 1000.0
    room = data[names.HEADROOM_COST].to_numpy(dtype=float)
    headroom_cost = (
        float(np.nansum(room) * interval_s / 3600.0) if np.isfinite(room).any() else None
    )
    states = []
    for row in active:
        col = names.metric_names(row.metric)
        found = data[col["expected"]].notna().to_numpy()
        current: dict[str, Any] = dict.fromkeys(("actual", "expected", "drift", "drift_rel"))
        t_current = None
        if found.any():
            last = data.index[np.flatnonzero(found)[-1]]
            t_current = int(last)
            current = {
                "actual": _number(data.at[last, row.metric]),
                "expected": _number(data.at[last, col["expected"]]),
                "drift": _number(data.at[last, col["drift"]]),
                "drift_rel": _number(data.at[last, col["drift_rel"]]),
            }
        checkpoint = charts.latest_checkpoint(session, unit.id, row.metric, row.id, end_ms)
        events = select(DriftEvent).where(
            DriftEvent.unit_id == unit.id,
            DriftEvent.metric == row.metric,
            DriftEvent.baseline_id == row.id,
            DriftEvent.alarm_ms >= start_ms,
            DriftEvent.alarm_ms < end_ms,
        )
        count = session.scalar(select(func.count()).select_from(events.subquery())) or 0
        last_alarm = session.scalars(events.order_by(DriftEvent.alarm_ms.desc()).limit(1)).first()
        episode = None if last_alarm is None else episode_of(session, row, last_alarm)
        states.append(
            MetricState(
                row,
                t_current,
                **current,
                checkpoint=checkpoint,
                alarms=int(count),
                last_alarm=last_alarm,
                episode=episode,
            )
        )
    prof = profile(unit.kind)
    active_metrics = {r.metric for r in active}
    cost_metric = next((b.metric for b in prof.cost if b.metric in active_metrics), None)
    return Summary(
        unit,
        start_ms,
        end_ms,
        config.currency,
        config.fuel_price_per_gj,
        cost_metric,
        totals,
        headroom_cost,
        states,
    )
