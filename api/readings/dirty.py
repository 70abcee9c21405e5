"""Marking spans of units dirty: the producer side of the work queue.

Called inside the transaction that changed the data (ingest, upload, plant apply), so a
reading acknowledged with 2xx always has its recompute queued: both commit or neither.
The worker (``api.pipeline``) consumes the spans.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping

from sqlalchemy import func, insert, select
from sqlalchemy.orm import Session

from api.core.db import utcnow
from api.pipeline.models import SpanState, WorkSpan
from api.plants.models import Plant, Tag, Unit, UnitBinding
from api.readings.models import Reading


def align(start_ms: int, end_ms: int, interval_ms: int) -> tuple[int, int]:
    """[start, end] of readings -> the half-open span of whole intervals covering them."""
    start = (start_ms // interval_ms) * interval_ms
    end = (end_ms // interval_ms) * interval_ms + interval_ms
    return start, end


def mark_units_dirty(
    *, session: Session, spans: Iterable[tuple[int, int, int]], reason: str
) -> int:
    """Queue ``(unit_id, start_ms, end_ms)`` spans (already aligned). Returns how many."""
    now = utcnow()
    rows = [
        {
            "unit_id": unit_id,
            "start_ms": start,
            "end_ms": end,
            "state": SpanState.PENDING.value,
            "reason": reason,
            "attempts": 0,
            "created_at": now,
            "updated_at": now,
        }
        for unit_id, start, end in spans
        if end > start
    ]
    if rows:
        session.execute(insert(WorkSpan), rows)
    return len(rows)


def mark_dirty_for_tags(
    *, session: Session, plant: Plant, ranges: Mapping[int, tuple[int, int]], reason: str
) -> list[str]:
    """Queue one span per unit fed by any tag in ``ranges`` (tag_id -> (min_ms, max_ms)).

    The span covers every interval from the earliest to the latest changed reading of the
    unit's tags. A change of the plant's ambient tag dirties every unit of the plant,
    because T0 enters every exergy. Returns the slugs of the units queued.
    """
    if not ranges:
        return []
    interval_ms = plant.interval_seconds * 1000
    per_unit: dict[int, tuple[int, int]] = {}
    rows = session.execute(
        select(UnitBinding.unit_id, UnitBinding.tag_id).where(UnitBinding.tag_id.in_(list(ranges)))
    ).all()
    touched = [(unit_id, ranges[tag_id]) for unit_id, tag_id in rows]
    if plant.ambient_tag:
        ambient_id = session.scalar(
            select(Tag.id).where(Tag.plant_id == plant.id, Tag.name == plant.ambient_tag)
        )
        if ambient_id is not None and ambient_id in ranges:
            unit_ids = session.scalars(select(Unit.id).where(Unit.plant_id == plant.id))
            touched += [(unit_id, ranges[ambient_id]) for unit_id in unit_ids]
    for unit_id, (lo, hi) in touched:
        old = per_unit.get(unit_id)
        per_unit[unit_id] = (lo, hi) if old is None else (min(old[0], lo), max(old[1], hi))
    mark_units_dirty(
        session=session,
        spans=[(u, *align(lo, hi, interval_ms)) for u, (lo, hi) in per_unit.items()],
        reason=reason,
    )
    if not per_unit:
        return []
    return sorted(session.scalars(select(Unit.slug).where(Unit.id.in_(list(per_unit)))))


def reading_range(*, session: Session, tag_ids: Iterable[int]) -> tuple[int, int] | None:
    """Earliest and latest stored reading of any of ``tag_ids``, or None."""
    ids = list(tag_ids)
    if not ids:
        return None
    lo, hi = session.execute(
        select(func.min(Reading.t_ms), func.max(Reading.t_ms)).where(Reading.tag_id.in_(ids))
    ).one()
    return None if lo is None else (int(lo), int(hi))
