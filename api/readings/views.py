"""Readings ingest routes (scope ``ingest``) and a small read-back route (``read``)."""

from __future__ import annotations

from typing import Annotated

from fastapi import APIRouter, Query
from pydantic import BaseModel
from sqlalchemy import select

from api.core.problems import InvalidInput, NotFound
from api.deps import IngestKey, ReadKey, SessionDep
from api.plants.models import Tag
from api.readings import service
from api.readings.models import Reading
from api.readings.schemas import ColumnarBatch, IngestReport, ReadingBatch
from api.readings.timeparse import parse_times

router = APIRouter(prefix="/readings", tags=["readings"])


@router.post("", response_model=IngestReport, operation_id="ingest_readings")
def ingest_readings(batch: ReadingBatch, session: SessionDep, _key: IngestKey) -> IngestReport:
    """Store a batch of (tag, time, value) readings of one plant.

    Values are in each tag's configured unit; times RFC 3339 with an offset or epoch ms.
    Bad items are rejected one by one (``errors[].index`` and ``field``), good ones
    stored. 200 with the counts; 422 when every item was rejected.
    """
    return service.ingest_rows(session=session, batch=batch)


@router.post("/columnar", response_model=IngestReport, operation_id="ingest_readings_columnar")
def ingest_columnar(batch: ColumnarBatch, session: SessionDep, _key: IngestKey) -> IngestReport:
    """Store many tags sampled at shared times: ``times`` plus one value list per tag.

    The compact form for historians: thousands of points per call cost one list of
    times and one list of numbers per tag. ``null`` values are gaps, not errors.
    """
    return service.ingest_columnar(session=session, batch=batch)


class ReadingSeries(BaseModel):
    plant: str
    tag: str
    si_unit: str
    t_ms: list[int]
    values: list[float]


@router.get("", response_model=ReadingSeries, operation_id="read_tag_readings")
def read_tag(
    plant: Annotated[str, Query(description="Plant slug")],
    tag: Annotated[str, Query(description="Tag name")],
    session: SessionDep,
    _key: ReadKey,
    start: Annotated[str | None, Query(alias="from", description="RFC 3339 or epoch ms")] = None,
    end: Annotated[str | None, Query(alias="to", description="RFC 3339 or epoch ms")] = None,
    limit: Annotated[int, Query(ge=1, le=100_000)] = 10_000,
) -> ReadingSeries:
    """Stored readings of one tag, in SI, oldest first (at most ``limit``)."""
    plant_row = service.get_plant_by_slug(session, plant)
    tag_row = session.scalars(
        select(Tag).where(Tag.plant_id == plant_row.id, Tag.name == tag)
    ).one_or_none()
    if tag_row is None:
        raise NotFound(f"no tag {tag!r} in plant {plant!r}")
    query = select(Reading.t_ms, Reading.value).where(Reading.tag_id == tag_row.id)
    for name, text, op in (("from", start, "ge"), ("to", end, "lt")):
        if text is None:
            continue
        ms, errors = parse_times([int(text) if text.lstrip("-").isdigit() else text])
        if errors:
            raise InvalidInput(errors[0], errors=[{"field": name, "message": errors[0]}])
        column = Reading.t_ms
        query = query.where(column >= int(ms[0]) if op == "ge" else column < int(ms[0]))
    rows = session.execute(query.order_by(Reading.t_ms).limit(limit)).all()
    return ReadingSeries(
        plant=plant,
        tag=tag,
        si_unit=tag_row.si_unit or tag_row.unit,
        t_ms=[r[0] for r in rows],
        values=[r[1] for r in rows],
    )
