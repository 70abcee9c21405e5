"""Results routes (scope ``read``): series with downsampling, CSV export, latest, metrics."""

from __future__ import annotations

import datetime as dt
from typing import Annotated

import numpy as np
from fastapi import APIRouter, Query
from fastapi.responses import JSONResponse, Response

from api.deps import ReadKey, SessionDep
from api.results import service
from api.results.csvexport import to_csv
from api.results.schemas import (
    LatestRead,
    MetricList,
    MetricRead,
    OutputFormat,
    ResultsRead,
    UnitSystem,
)
from api.uncertainty.metrics import U95

router = APIRouter(prefix="/units", tags=["results"])


def _values(arr: np.ndarray) -> list[float | None]:
    return [None if v != v else v for v in arr.tolist()]  # NaN -> null


def _body(results: service.ResultSet) -> dict:
    texts: dict[bytes, list[str]] = {}

    def times(t_ms: np.ndarray) -> list[str]:
        # Series of one request nearly always share their bucket starts: format once.
        key = t_ms.tobytes()
        if key not in texts:
            texts[key] = service.rfc3339_many(t_ms)
        return texts[key]

    return {
        "unit": results.unit,
        "start": service.rfc3339(results.start_ms),
        "end": service.rfc3339(results.end_ms),
        "unit_system": results.unit_system.value,
        "bucket_seconds": None if results.bucket_ms is None else results.bucket_ms // 1000,
        "series": [
            {
                "metric": s.metric,
                "unit": s.unit,
                "label": s.label,
                "aggregate": s.aggregate,
                "t": times(s.t_ms),
                "mean": _values(s.mean),
                "min": _values(s.min),
                "max": _values(s.max),
                "count": s.count.tolist(),
            }
            for s in results.series
        ],
    }


@router.get(
    "/{unit}/results",
    response_model=ResultsRead,
    operation_id="get_unit_results",
    responses={200: {"content": {"text/csv": {}}}},
)
def get_results(
    unit: str,
    session: SessionDep,
    _key: ReadKey,
    start: Annotated[
        dt.datetime | None,
        Query(description="RFC 3339 with offset; default: `end` minus one day"),
    ] = None,
    end: Annotated[
        dt.datetime | None,
        Query(description="RFC 3339 with offset, exclusive; default: after the latest result"),
    ] = None,
    metrics: Annotated[
        str | None, Query(description="Comma-separated metric names; default: all")
    ] = None,
    units: Annotated[UnitSystem, Query(description="Output unit system")] = UnitSystem.SI,
    max_points: Annotated[
        int,
        Query(
            description=(
                f"At most this many points per series ({service.MIN_MAX_POINTS} to "
                f"{service.MAX_MAX_POINTS}); longer ranges are downsampled to min/mean/max "
                "per bucket"
            )
        ),
    ] = service.DEFAULT_MAX_POINTS,
    format: Annotated[OutputFormat, Query(description="json or csv")] = OutputFormat.JSON,
) -> Response:
    """A unit's results over [start, end), downsampled on the server when long."""
    results = service.query_results(
        session=session,
        unit_slug=unit,
        start=start,
        end=end,
        metrics=metrics.split(",") if metrics else None,
        unit_system=units,
        max_points=max_points,
    )
    if format is OutputFormat.CSV:
        return Response(
            to_csv(results),
            media_type="text/csv; charset=utf-8",
            headers={"Content-Disposition": f'attachment; filename="{results.unit}-results.csv"'},
        )
    # Built directly: validating tens of thousands of floats through the model is slow.
    return JSONResponse(_body(results))


@router.get("/{unit}/latest", response_model=LatestRead, operation_id="get_unit_latest")
def get_latest(
    unit: str,
    session: SessionDep,
    _key: ReadKey,
    units: Annotated[UnitSystem, Query(description="Output unit system")] = UnitSystem.SI,
) -> LatestRead:
    """The most recent computed interval of a unit: every metric's value and unit."""
    found = service.latest(session=session, unit_slug=unit, unit_system=units)
    return LatestRead(
        t=None if found.t_ms is None else service.rfc3339(found.t_ms),
        values=found.values,
        units=found.units,
        uncertainty={
            name[len(U95) :]: value
            for name, value in found.values.items()
            if name.startswith(U95) and name[len(U95) :] in found.values
        },
    )


@router.get("/{unit}/metrics", response_model=MetricList, operation_id="list_unit_metrics")
def get_metrics(unit: str, session: SessionDep, _key: ReadKey) -> MetricList:
    """The metrics a unit has, with SI and US customary units and labels."""
    ref, items = service.list_metrics(session=session, unit_slug=unit)
    return MetricList(unit=ref.slug, kind=ref.kind, metrics=[MetricRead(**i) for i in items])
