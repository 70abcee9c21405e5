"""Shift-log upload routes."""

from __future__ import annotations

from typing import Annotated

from fastapi import APIRouter, File, Form, Query, UploadFile

from api.deps import IngestKey, ReadKey, SessionDep, SettingsDep
from api.uploads import service
from api.uploads.schemas import UploadList, UploadMode, UploadRead

router = APIRouter(prefix="/uploads", tags=["uploads"])


@router.post("", status_code=201, response_model=UploadRead, operation_id="upload_shiftlog")
def upload_shiftlog(
    file: Annotated[UploadFile, File(description="The shift-log CSV")],
    plant: Annotated[str, Form(description="Plant slug")],
    session: SessionDep,
    settings: SettingsDep,
    key: IngestKey,
    mode: Annotated[UploadMode, Form()] = UploadMode.PARTIAL,
) -> UploadRead:
    """Upload a shift-log CSV (wide or long form; see the README for the formats).

    201 with the report (per-row, per-column errors; units queued for recompute);
    413 over the size limit; 422 when nothing was stored (all_or_nothing with problems,
    or no good reading), the problem carrying ``upload_id``.
    """
    limit = settings.upload_max_bytes
    data = file.file.read(limit + 1)
    if len(data) > limit:
        raise service.too_large(file.size or len(data), limit)
    return service.create_upload(
        session=session,
        plant_slug=plant,
        filename=file.filename or "upload.csv",
        data=data,
        mode=mode,
        api_key_id=key.id,
        max_bytes=limit,
    )


@router.get("", response_model=UploadList, operation_id="list_uploads")
def list_uploads(
    session: SessionDep,
    _key: ReadKey,
    plant: str | None = None,
    limit: Annotated[int, Query(ge=1, le=1000)] = 100,
) -> UploadList:
    """Recent uploads, newest first."""
    return UploadList(uploads=service.list_uploads(session=session, plant_slug=plant, limit=limit))


@router.get("/{upload_id}", response_model=UploadRead, operation_id="get_upload")
def get_upload(upload_id: int, session: SessionDep, _key: ReadKey) -> UploadRead:
    return service.get_upload(session=session, upload_id=upload_id)
