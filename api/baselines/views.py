"""Baseline and drift routes. Scopes: ``read`` for GET; ``admin`` to fit and activate
(activation recomputes results)."""

from __future__ import annotations

import datetime as dt
from typing import Annotated, Any

import numpy as np
from fastapi import APIRouter, Query

from api.baselines import service
from api.baselines.models import Baseline
from api.baselines.schemas import (
    Activate,
    BaselineCreate,
    BaselineList,
    BaselineRead,
    Comparison,
    DriftSummary,
)
from api.deps import AdminKey, ReadKey, SessionDep
from api.plants.models import Unit
from engine.steady import SteadyLimit

router = APIRouter(prefix="/units", tags=["baselines"])


def _time(t_ms: int | None) -> dt.datetime | None:
    if t_ms is None:
        return None
    return dt.datetime.fromtimestamp(int(t_ms) / 1000.0, tz=dt.UTC)


def _values(values: np.ndarray) -> list[float | None]:
    return [float(v) if np.isfinite(v) else None for v in np.asarray(values, dtype=float)]


def baseline_read(
    unit: Unit, row: Baseline, recompute: service.RecomputeInfo | None = None
) -> dict[str, Any]:
    """The JSON of one version (see :class:`BaselineRead`)."""
    model = row.model
    chart = row.settings["chart"]
    best = row.best
    bands = None
    if best:
        edges = best["edges"]
        bands = {
            "load": best["load"],
            "percentile": best["percentile"],
            "min_count": best["min_count"],
            "bands": [
                {"load_from": edges[i], "load_to": edges[i + 1], "best": value, "count": count}
                for i, (value, count) in enumerate(zip(best["best"], best["counts"], strict=True))
            ],
        }
    return {
        "version": row.version,
        "unit": unit.slug,
        "metric": row.metric,
        "active": row.active,
        "start": _time(row.start_ms),
        "end": _time(row.end_ms),
        "load": row.load,
        "regressors": list(row.regressors),
        "model": model["form"],
        "terms": model["terms"],
        "coefficients": model["coefficients"],
        "ranges": dict(zip(model["regressors"], model["ranges"], strict=True)),
        "statistics": {
            "n": model["n"],
            "p": len(model["coefficients"]),
            "dof": model["dof"],
            "r2": model["r2"],
            "cv_rmse": model["cv_rmse"],
            "nmbe": model["nmbe"],
            "rmse": model["residual_std"],
            "mean": model["mean"],
            "granularity": model["granularity"],
            "meets_guideline_14": model["meets_guideline14"],
            "bic": model["bic"],
        },
        "chart": {**chart, "origin": _time(row.chart_origin_ms)},
        "steady": row.settings["steady"],
        "counts": row.settings["counts"],
        "demonstrated_best": bands,
        "note": row.note,
        "created_by": row.created_by,
        "created_at": row.created_at,
        "activated_by": row.activated_by,
        "activated_at": row.activated_at,
        "recompute": None
        if recompute is None
        else {
            "start": _time(recompute.start_ms),
            "end": _time(recompute.end_ms),
            "intervals": recompute.intervals,
        },
    }


@router.get("/{unit}/baselines", response_model=BaselineList, operation_id="list_baselines")
def list_baselines(
    unit: str,
    session: SessionDep,
    _key: ReadKey,
    metric: Annotated[str | None, Query(description="Only versions of this metric")] = None,
) -> dict[str, Any]:
    """Every baseline version of a unit, oldest first, with statistics and which is active."""
    found, rows = service.list_baselines(session=session, unit_slug=unit, metric=metric)
    return {"unit": found.slug, "baselines": [baseline_read(found, r) for r in rows]}


@router.post(
    "/{unit}/baselines",
    response_model=BaselineRead,
    status_code=201,
    operation_id="create_baseline",
)
def create_baseline(
    unit: str, body: BaselineCreate, session: SessionDep, key: AdminKey
) -> dict[str, Any]:
    """Fit a new version of the unit's baseline of ``metric`` on the steady intervals of
    [start, end) ("this month last year"); optionally activate it at once."""
    request = service.FitRequest(
        metric=body.metric,
        start_ms=service.to_ms(body.start, "start"),
        end_ms=service.to_ms(body.end, "end"),
        regressors=list(body.regressors),
        load=body.load,
        forms=body.forms,
        granularity=body.granularity,
        confidence=body.confidence,
        steady_window_s=body.steady.window_seconds if body.steady else 900.0,
        steady_limits=[SteadyLimit(**lim.model_dump()) for lim in body.steady.limits]
        if body.steady and body.steady.limits
        else None,
        chart=body.chart.model_dump() if body.chart else {},
        note=body.note,
        activate=body.activate,
        recompute_from_ms=service.to_ms(body.recompute_from, "recompute_from")
        if body.recompute_from
        else None,
    )
    row, recompute = service.fit(
        session=session, unit_slug=unit, request=request, created_by=key.name
    )
    found = session.get(Unit, row.unit_id)
    assert found is not None
    return baseline_read(found, row, recompute)


@router.get(
    "/{unit}/baselines/compare", response_model=Comparison, operation_id="compare_baselines"
)
def compare_baselines(
    unit: str,
    session: SessionDep,
    _key: ReadKey,
    a: Annotated[int, Query(description="First version")],
    b: Annotated[int, Query(description="Second version (same metric)")],
    start: Annotated[
        dt.datetime | None,
        Query(description="RFC 3339; default the earlier reference period's start"),
    ] = None,
    end: Annotated[
        dt.datetime | None, Query(description="RFC 3339; default the later one's end")
    ] = None,
    max_points: Annotated[int, Query(ge=2, le=10_000)] = 500,
) -> dict[str, Any]:
    """Two versions' statistics, and their predictions over a period side by side."""
    result = service.compare(
        session=session,
        unit_slug=unit,
        a=a,
        b=b,
        start_ms=service.to_ms(start, "start") if start else None,
        end_ms=service.to_ms(end, "end") if end else None,
        max_points=max_points,
    )

    def side(s: service.SideResult) -> dict[str, Any]:
        read = baseline_read(result.unit, s.row)
        fit = s.fit
        return {
            "version": s.row.version,
            "start": read["start"],
            "end": read["end"],
            "model": read["model"],
            "statistics": read["statistics"],
            "period": {
                "n": fit.n,
                "cv_rmse": _values(np.array([fit.cv_rmse]))[0],
                "nmbe": _values(np.array([fit.nmbe]))[0],
                "rmse": _values(np.array([fit.rmse]))[0],
                "meets_guideline_14": fit.meets(s.model.granularity),
                "extrapolated": s.extrapolated,
                "mean_expected": _values(np.array([s.mean_expected]))[0],
            },
        }

    return {
        "unit": result.unit.slug,
        "metric": result.metric,
        "start": _time(result.start_ms),
        "end": _time(result.end_ms),
        "a": side(result.a),
        "b": side(result.b),
        "difference": result.difference,
        "series": {
            "bucket_seconds": None if result.bucket_ms is None else result.bucket_ms // 1000,
            "t": [_time(int(t)) for t in result.t_ms],
            "actual": _values(result.actual),
            "expected_a": _values(result.expected_a),
            "expected_b": _values(result.expected_b),
        },
    }


@router.get("/{unit}/baselines/{version}", response_model=BaselineRead, operation_id="get_baseline")
def get_baseline(unit: str, version: int, session: SessionDep, _key: ReadKey) -> dict[str, Any]:
    """One version: model, coefficients, fit statistics, settings, demonstrated best."""
    found, row = service.get_baseline(session=session, unit_slug=unit, version=version)
    return baseline_read(found, row)


@router.post(
    "/{unit}/baselines/{version}/activate",
    response_model=BaselineRead,
    operation_id="activate_baseline",
)
def activate_baseline(
    unit: str,
    version: int,
    session: SessionDep,
    key: AdminKey,
    body: Activate | None = None,
) -> dict[str, Any]:
    """Make this version the active baseline of its metric and queue the unit's results
    from ``recompute_from`` (default: the reference period's start) for recompute; the
    control charts start there afresh."""
    start = body.recompute_from if body else None
    row, info = service.activate(
        session=session,
        unit_slug=unit,
        version=version,
        activated_by=key.name,
        recompute_from_ms=service.to_ms(start, "recompute_from") if start else None,
    )
    found = session.get(Unit, row.unit_id)
    assert found is not None
    return baseline_read(found, row, info)


@router.get("/{unit}/drift/summary", response_model=DriftSummary, operation_id="get_drift_summary")
def drift_summary(
    unit: str,
    session: SessionDep,
    _key: ReadKey,
    start: Annotated[
        dt.datetime | None, Query(description="RFC 3339; default `end` minus one day")
    ] = None,
    end: Annotated[
        dt.datetime | None,
        Query(description="RFC 3339, exclusive; default after the latest result"),
    ] = None,
) -> dict[str, Any]:
    """Cost of drift over [start, end) (extra fuel, money in the plant's currency, CO2),
    the headroom's value, and per active baseline the current drift, CUSUM state and
    latest alarm with the interval its shift began."""
    found = service.drift_summary(
        session=session,
        unit_slug=unit,
        start_ms=service.to_ms(start, "start") if start else None,
        end_ms=service.to_ms(end, "end") if end else None,
    )
    metrics = []
    for state in found.metrics:
        chart = state.row.settings["chart"]
        cp = state.checkpoint
        alarm = state.last_alarm
        residual = state.row.model.get("residual_std")
        metrics.append(
            {
                "metric": state.row.metric,
                "version": state.row.version,
                "current": {
                    "t": _time(state.current_t_ms),
                    "actual": state.actual,
                    "expected": state.expected,
                    "drift": state.drift,
                    "drift_rel": state.drift_rel,
                },
                "cusum": {
                    "valid_to": _time(cp.t_ms) if cp else None,
                    "upper": cp.cusum_upper if cp else None,
                    "lower": cp.cusum_lower if cp else None,
                    "upper_run": cp.upper_run if cp else None,
                    "lower_run": cp.lower_run if cp else None,
                    "upper_since": _time(cp.upper_since_ms) if cp else None,
                    "lower_since": _time(cp.lower_since_ms) if cp else None,
                    "k": chart["k"],
                    "h": chart["h"],
                },
                "alarms": state.alarms,
                "episode": None
                if state.episode is None
                else {
                    "side": state.episode.side,
                    "shift_start": _time(state.episode.shift_start_ms),
                    "first_alarm": _time(state.episode.first_alarm_ms),
                    "alarms": state.episode.alarms,
                    "complete": state.episode.complete,
                },
                "last_alarm": None
                if alarm is None
                else {
                    "at": _time(alarm.alarm_ms),
                    "side": alarm.side,
                    "shift_start": _time(alarm.shift_start_ms),
                    "run_length": alarm.run_length,
                    "statistic": alarm.statistic,
                    "estimated_shift": alarm.estimated_shift,
                    "estimated_shift_value": None
                    if residual is None
                    else alarm.estimated_shift * float(residual),
                },
            }
        )
    return {
        "unit": found.unit.slug,
        "start": _time(found.start_ms),
        "end": _time(found.end_ms),
        "currency": found.currency,
        "fuel_price_per_gj": found.fuel_price_per_gj,
        "cost_metric": found.cost_metric,
        "totals": found.totals,
        "headroom_cost": found.headroom_cost,
        "metrics": metrics,
    }
