"""``GET /api/v1/health``: public, for load balancers and container health checks."""

from __future__ import annotations

from importlib.metadata import PackageNotFoundError, version

from fastapi import APIRouter
from fastapi.responses import JSONResponse
from pydantic import BaseModel
from sqlalchemy import text

from api.deps import SessionDep

router = APIRouter(tags=["health"])


def _version() -> str:
    try:
        return version("lostwork")
    except PackageNotFoundError:
        return "unknown"


class Health(BaseModel):
    status: str
    database: str
    version: str


@router.get("/health", response_model=Health, operation_id="health")
def health(session: SessionDep) -> JSONResponse:
    """200 when the database answers, 503 otherwise. No key needed."""
    try:
        session.execute(text("SELECT 1"))
        body = Health(status="ok", database="ok", version=_version())
        return JSONResponse(body.model_dump())
    except Exception as exc:  # any database failure means "not ready"
        body = Health(status="unavailable", database=type(exc).__name__, version=_version())
        return JSONResponse(body.model_dump(), status_code=503)
