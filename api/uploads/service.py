"""Shift-log uploads: parse (``api.ingest.shiftlog``), store, queue, and keep a record.

The readings, the dirty spans and the upload record commit in one transaction. A file
uploaded again stores nothing new (the upsert finds every value unchanged) and the
report says it repeats an earlier upload.
"""

from __future__ import annotations

import hashlib
from typing import Any

import numpy as np
from sqlalchemy import select
from sqlalchemy.orm import Session

from api.core.problems import ContentTooLarge, InvalidInput, NotFound
from api.ingest.shiftlog import TagInfo, parse_shiftlog
from api.plants.models import Plant, Tag
from api.readings.dirty import mark_dirty_for_tags
from api.readings.service import get_plant_by_slug
from api.readings.store import UpsertOutcome, upsert_readings
from api.uploads.models import Upload
from api.uploads.schemas import UploadMode, UploadRead

_SEPARATOR_NAMES = {",": "comma", ";": "semicolon", "\t": "tab", "": "none"}


def too_large(size: int, limit: int) -> ContentTooLarge:
    return ContentTooLarge(
        f"the file is {size} bytes; the upload limit is {limit} bytes "
        f"({limit / 2**20:g} MiB, setting LOSTWORK_UPLOAD_MAX_BYTES)",
        limit_bytes=limit,
    )


def to_read(upload: Upload, plant_slug: str) -> UploadRead:
    data = {c: getattr(upload, c) for c in UploadRead.model_fields if c != "plant"}
    return UploadRead(plant=plant_slug, **data)


def create_upload(
    *,
    session: Session,
    plant_slug: str,
    filename: str,
    data: bytes,
    mode: UploadMode = UploadMode.PARTIAL,
    api_key_id: int | None = None,
    max_bytes: int,
) -> UploadRead:
    """Store a shift log and its record; see the module notes.

    Raises :class:`ContentTooLarge` over ``max_bytes`` and :class:`InvalidInput` (with the
    record's ``upload_id``) when nothing could be stored because of problems.
    """
    if len(data) > max_bytes:
        raise too_large(len(data), max_bytes)
    plant = get_plant_by_slug(session, plant_slug)
    tags = {t.name: t for t in session.scalars(select(Tag).where(Tag.plant_id == plant.id))}
    infos = {
        name: TagInfo(unit=t.unit, si_unit=t.si_unit, low=t.low, high=t.high)
        for name, t in tags.items()
    }
    sha = hashlib.sha256(data).hexdigest()
    parsed = parse_shiftlog(
        data, tags=infos, time_zone=plant.time_zone, atmosphere_pa=plant.atmosphere_pa
    )
    errors = [e.as_dict() for e in parsed.errors]
    notices: list[dict[str, Any]] = [
        {
            "kind": "format",
            "message": (
                f"{parsed.form} form, {_SEPARATOR_NAMES.get(parsed.separator, parsed.separator)} "
                f"separator, decimal {parsed.decimal!r}, {parsed.rows_total} data rows, "
                f"{len(parsed.readings)} readings"
            ),
            "rows": [],
        }
    ]
    previous = session.scalar(
        select(Upload.id)
        .where(Upload.plant_id == plant.id, Upload.sha256 == sha)
        .order_by(Upload.id.desc())
        .limit(1)
    )
    if previous is not None:
        notices.append(
            {
                "kind": "same_file",
                "message": f"the same file (sha256) was uploaded before as upload {previous}",
                "rows": [],
            }
        )
    notices += [n.as_dict() for n in parsed.notices]

    store = not (mode == UploadMode.ALL_OR_NOTHING and errors)
    outcome, units = UpsertOutcome(), []
    readings = parsed.readings
    if store and len(readings):
        # Once per tag, not per reading: a shift log can carry a million cells.
        tag_ids = {name: t.id for name, t in tags.items()}
        ids = readings["tag"].map(tag_ids).to_numpy(dtype=np.int32)
        outcome = upsert_readings(
            session,
            ids,
            readings["t_ms"].to_numpy(np.int64),
            readings["value"].to_numpy(np.float64),
        )
        units = mark_dirty_for_tags(
            session=session, plant=plant, ranges=outcome.changed_ranges, reason="upload"
        )
    nothing = (outcome.stored + outcome.replaced + outcome.unchanged) == 0
    upload = Upload(
        plant_id=plant.id,
        api_key_id=api_key_id,
        filename=filename[:255],
        sha256=sha,
        size_bytes=len(data),
        mode=mode.value,
        status="rejected" if (nothing and errors) or not store else "stored",
        stored=outcome.stored,
        replaced=outcome.replaced,
        unchanged=outcome.unchanged,
        rejected=len(errors),
        errors=errors,
        notices=notices,
        units_recomputed=units,
    )
    session.add(upload)
    session.commit()
    report = to_read(upload, plant.slug)
    if upload.status == "rejected":
        why = (
            f"{len(errors)} problem(s) found and mode is all_or_nothing"
            if not store
            else f"{len(errors)} problem(s) found and no good reading left"
        )
        raise InvalidInput(
            f"nothing was stored: {why}",
            errors=errors,
            upload_id=upload.id,
            report=report.model_dump(mode="json", exclude={"errors"}),
        )
    return report


def list_uploads(
    *, session: Session, plant_slug: str | None = None, limit: int = 100
) -> list[UploadRead]:
    query = select(Upload, Plant.slug).join(Plant).order_by(Upload.id.desc()).limit(limit)
    if plant_slug is not None:
        query = query.where(Plant.slug == plant_slug)
    return [to_read(u, slug) for u, slug in session.execute(query).all()]


def get_upload(*, session: Session, upload_id: int) -> UploadRead:
    row = session.execute(
        select(Upload, Plant.slug).join(Plant).where(Upload.id == upload_id)
    ).one_or_none()
    if row is None:
        raise NotFound(f"no upload {upload_id}")
    return to_read(row[0], row[1])
