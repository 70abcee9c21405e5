"""Uncertainty routes (scope ``read``): the inputs a result's uncertainty comes from."""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import asdict
from typing import Annotated

from fastapi import APIRouter, Query

from api.deps import ReadKey, SessionDep
from api.results.service import rfc3339
from api.uncertainty import service
from api.uncertainty.schemas import ContributorRead, UncertaintyRead

router = APIRouter(prefix="/units", tags=["uncertainty"])


@router.get(
    "/{unit}/uncertainty", response_model=UncertaintyRead, operation_id="get_unit_uncertainty"
)
def get_uncertainty(
    unit: str,
    session: SessionDep,
    _key: ReadKey,
    metric: Annotated[
        str | None,
        Query(description="A result of the unit's kind; default its first efficiency"),
    ] = None,
    start: Annotated[
        dt.datetime | None,
        Query(description="RFC 3339 with offset; with end: the period's mean"),
    ] = None,
    end: Annotated[
        dt.datetime | None,
        Query(description="RFC 3339 with offset, exclusive; neither: the latest interval"),
    ] = None,
    limit: Annotated[
        int | None, Query(ge=1, le=100, description="Keep only the first inputs")
    ] = None,
) -> UncertaintyRead:
    """A result's uncertainty and its inputs ranked by contribution (which instrument to
    fix first), recomputed from the readings."""
    found = service.contributors(
        session=session, unit_slug=unit, metric=metric, start=start, end=end, limit=limit
    )
    return UncertaintyRead(
        unit=found.unit,
        metric=found.metric,
        metric_unit=found.metric_unit,
        start=rfc3339(found.start_ms),
        end=rfc3339(found.end_ms),
        basis=found.basis,
        intervals_in_period=found.intervals_in_period,
        intervals_used=found.intervals_used,
        value=_finite(found.value),
        u=_finite(found.u),
        u_random=_finite(found.u_random),
        u_systematic=_finite(found.u_systematic),
        u95=_finite(found.u95),
        contributors=[
            ContributorRead.model_validate(
                {k: _finite(v) if isinstance(v, float) else v for k, v in asdict(c).items()}
            )
            for c in found.contributors
        ],
    )


def _finite(value: float) -> float | None:
    return value if math.isfinite(value) else None
