"""REST ingest: validate item by item, convert to SI, upsert, queue the recompute.

One transaction per request: the readings and the dirty spans they cause commit
together. Valid items are stored even when others are rejected; each rejection names
its item (``index``; columnar: ``field`` = ``series.<tag>`` plus ``index`` into
``times``) and the field at fault.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from sqlalchemy import select
from sqlalchemy.orm import Session

from api import measure
from api.core.problems import ErrorItem, InvalidInput, NotFound
from api.plants.models import Plant, Tag
from api.readings.dirty import mark_dirty_for_tags
from api.readings.schemas import MAX_ITEMS, ColumnarBatch, IngestReport, ReadingBatch
from api.readings.store import dedupe_last, upsert_readings
from api.readings.timeparse import parse_times

MAX_LISTED_ERRORS = 1000


@dataclass
class _Batch:
    """Items flattened to arrays: tag position (-1 unknown), time, raw value, verdict."""

    tag_pos: np.ndarray
    t_ms: np.ndarray
    raw: np.ndarray
    ok: np.ndarray
    errors: list[dict[str, Any]] = field(default_factory=list)


def get_plant_by_slug(session: Session, slug: str) -> Plant:
    plant = session.scalars(select(Plant).where(Plant.slug == slug)).one_or_none()
    if plant is None:
        raise NotFound(f"no plant {slug!r}")
    return plant


def _numbers(values: Sequence[Any]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(floats, is_null, is_not_a_number) for JSON values; fast when all are numbers."""
    n = len(values)
    types = set(map(type, values))
    if types <= {float, int}:
        return np.asarray(values, dtype=float), np.zeros(n, bool), np.zeros(n, bool)
    out = np.full(n, np.nan)
    null = np.zeros(n, bool)
    bad = np.zeros(n, bool)
    for i, v in enumerate(values):
        if v is None:
            null[i] = True
        elif type(v) in (float, int):
            out[i] = v
        else:
            bad[i] = True  # text, bool, list: a JSON number is required
    return out, null, bad


@dataclass(frozen=True)
class _TagRow:
    id: int
    name: str
    unit: str
    si_unit: str | None
    low: float | None
    high: float | None


def _plant_tags(session: Session, plant_id: int) -> list[_TagRow]:
    # Plain rows, not ORM objects: a plant may have thousands of tags and this runs per
    # request.
    rows = session.execute(
        select(Tag.id, Tag.name, Tag.unit, Tag.si_unit, Tag.low, Tag.high).where(
            Tag.plant_id == plant_id
        )
    )
    return [_TagRow(*row) for row in rows.all()]


def _check_values(
    batch: _Batch, tags: list[_TagRow], where: Any, value_field: str = "value"
) -> None:
    """Reject non-finite and implausible values (bounds are in the tag's own unit)."""
    finite = np.isfinite(batch.raw)
    for i in np.flatnonzero(batch.ok & ~finite):
        batch.errors.append(
            where(i, value_field, f"value {float(batch.raw[i])!r} is not a finite number")
        )
    batch.ok &= finite
    if not tags or not batch.ok.any():
        return
    lows = np.array([-np.inf if t.low is None else t.low for t in tags])
    highs = np.array([np.inf if t.high is None else t.high for t in tags])
    pos = np.where(batch.tag_pos >= 0, batch.tag_pos, 0)
    below = batch.ok & (batch.raw < lows[pos])
    above = batch.ok & (batch.raw > highs[pos])
    for i in np.flatnonzero(below | above):
        tag = tags[pos[i]]
        side = (
            f"below the plausible low {tag.low}"
            if below[i]
            else f"above the plausible high {tag.high}"
        )
        batch.errors.append(
            where(
                i, value_field, f"value {batch.raw[i]:g} {tag.unit} of tag {tag.name!r} is {side}"
            )
        )
    batch.ok &= ~(below | above)


def _to_si(batch: _Batch, tags: list[_TagRow], atmosphere_pa: float) -> np.ndarray:
    """SI values of the accepted items: one pint conversion per distinct unit pair."""
    si = np.full(len(batch.raw), np.nan)
    pairs: dict[tuple[str, str], list[int]] = {}
    for pos, tag in enumerate(tags):
        pairs.setdefault((tag.unit, tag.si_unit or tag.unit), []).append(pos)
    group = np.zeros(len(tags), dtype=np.int64)
    for g, positions in enumerate(pairs.values()):
        group[positions] = g
    item_group = group[np.where(batch.tag_pos >= 0, batch.tag_pos, 0)]
    for g, (unit, si_unit) in enumerate(pairs):
        mine = batch.ok & (item_group == g)
        if mine.any():
            si[mine] = measure.to_si(batch.raw[mine], unit, si_unit, atmosphere_pa)
    return si


def _store(
    session: Session,
    plant: Plant,
    tags: list[_TagRow],
    batch: _Batch,
    received: int,
    reason: str = "ingest",
) -> IngestReport:
    si = _to_si(batch, tags, plant.atmosphere_pa)
    keep = batch.ok
    tag_ids = np.array([t.id for t in tags] or [0], dtype=np.int32)[batch.tag_pos[keep]]
    ids, t_ms, values, duplicates = dedupe_last(tag_ids, batch.t_ms[keep], si[keep])
    outcome = upsert_readings(session, ids, t_ms, values)
    units = mark_dirty_for_tags(
        session=session, plant=plant, ranges=outcome.changed_ranges, reason=reason
    )
    session.commit()
    errors = sorted(batch.errors, key=lambda e: (e.get("index") or 0, e.get("field") or ""))
    rejected = received - int(keep.sum())
    report = IngestReport(
        plant=plant.slug,
        received=received,
        stored=outcome.stored,
        replaced=outcome.replaced,
        unchanged=outcome.unchanged,
        rejected=rejected,
        duplicates=duplicates,
        errors=[ErrorItem(**e) for e in errors[:MAX_LISTED_ERRORS]],
        errors_truncated=max(0, len(errors) - MAX_LISTED_ERRORS),
        units_marked_dirty=units,
    )
    if received and rejected == received:
        raise InvalidInput(
            f"all {received} readings were rejected; nothing was stored",
            errors=report.errors,
            **report.model_dump(exclude={"errors"}),
        )
    return report


def ingest_rows(*, session: Session, batch: ReadingBatch) -> IngestReport:
    """Store a row-form batch (see :mod:`api.readings.schemas`)."""
    plant = get_plant_by_slug(session, batch.plant)
    items = batch.readings
    n = len(items)
    tag_rows = _plant_tags(session, plant.id)
    index = {t.name: pos for pos, t in enumerate(tag_rows)}
    names = [item.get("tag") for item in items]
    tag_pos = np.fromiter(
        (index.get(name, -1) if type(name) is str else -1 for name in names), np.int64, n
    )
    t_ms, time_errors = parse_times([item.get("time") for item in items])
    values = [item.get("value") for item in items]
    raw, null, bad = _numbers(values)
    b = _Batch(tag_pos=tag_pos, t_ms=t_ms, raw=raw, ok=np.ones(n, bool))

    def where(i: int, fld: str, message: str) -> dict[str, Any]:
        return {"index": int(i), "field": fld, "message": message}

    for i in np.flatnonzero(tag_pos < 0).tolist():
        name = names[i]
        b.errors.append(
            where(i, "tag", f"unknown tag {name!r} for plant {plant.slug!r}")
            if type(name) is str
            else where(i, "tag", f"tag must be a text, got {name!r}")
        )
    for i, message in time_errors.items():
        b.errors.append(where(i, "time", message))
    for i in np.flatnonzero(null).tolist():
        b.errors.append(where(i, "value", "value is missing (null)"))
    for i in np.flatnonzero(bad).tolist():
        b.errors.append(where(i, "value", f"value {values[i]!r} is not a number"))
    b.ok &= tag_pos >= 0
    if time_errors:
        b.ok[list(time_errors)] = False
    b.ok &= ~null & ~bad
    _check_values(b, tag_rows, where)
    return _store(session, plant, tag_rows, b, received=n)


def ingest_columnar(*, session: Session, batch: ColumnarBatch) -> IngestReport:
    """Store a columnar batch (see :class:`api.readings.schemas.ColumnarBatch`)."""
    plant = get_plant_by_slug(session, batch.plant)
    n_times = len(batch.times)
    if n_times * max(1, len(batch.series)) > MAX_ITEMS:
        raise InvalidInput(
            f"at most {MAX_ITEMS} readings per call; split the batch",
            errors=[{"field": "series", "message": f"{n_times} times x {len(batch.series)} tags"}],
        )
    tag_rows = _plant_tags(session, plant.id)
    index = {t.name: pos for pos, t in enumerate(tag_rows)}
    t_axis, time_errors = parse_times(batch.times)
    time_ok = np.ones(n_times, bool)
    if time_errors:
        time_ok[list(time_errors)] = False
    errors: list[dict[str, Any]] = [
        {"index": i, "field": "times", "message": m} for i, m in sorted(time_errors.items())
    ]
    parts_pos, parts_t, parts_raw, parts_ok = [], [], [], []
    # Where each accepted series starts in the flat arrays, to name (series, index) later.
    offsets: list[int] = []
    series_names: list[str] = []
    present_index: list[np.ndarray] = []
    received = flat = 0
    for name, values in batch.series.items():
        fld = f"series.{name}"
        raw, null, bad = _numbers(values)
        present = ~null
        count = int(present.sum())
        received += count
        if name not in index:
            errors.append(
                {"field": fld, "message": f"unknown tag {name!r} for plant {plant.slug!r}"}
            )
            continue
        if len(values) != n_times:
            errors.append(
                {
                    "field": fld,
                    "message": f"{len(values)} values for {n_times} times; lengths must match",
                }
            )
            continue
        for i in np.flatnonzero(bad):
            errors.append(
                {"index": int(i), "field": fld, "message": f"value {values[i]!r} is not a number"}
            )
        parts_pos.append(np.full(count, index[name], dtype=np.int64))
        parts_t.append(t_axis[present])
        parts_raw.append(raw[present])
        parts_ok.append((time_ok & ~bad)[present])
        offsets.append(flat)
        series_names.append(name)
        present_index.append(np.flatnonzero(present))
        flat += count
    b = _Batch(
        tag_pos=np.concatenate(parts_pos) if parts_pos else np.zeros(0, np.int64),
        t_ms=np.concatenate(parts_t) if parts_t else np.zeros(0, np.int64),
        raw=np.concatenate(parts_raw) if parts_raw else np.zeros(0),
        ok=np.concatenate(parts_ok) if parts_ok else np.zeros(0, bool),
        errors=errors,
    )

    def where(i: int, _fld: str, message: str) -> dict[str, Any]:
        k = int(np.searchsorted(offsets, i, side="right") - 1)
        return {
            "index": int(present_index[k][i - offsets[k]]),
            "field": f"series.{series_names[k]}",
            "message": message,
        }

    _check_values(b, tag_rows, where)
    return _store(session, plant, tag_rows, b, received=received)
