"""Every domain router, in one place, under ``/api/v1``."""

from __future__ import annotations

from fastapi import APIRouter

from api.auth.views import router as keys_router
from api.core.problems import PROBLEM_RESPONSES
from api.health.views import router as health_router
from api.plants.views import router as plants_router
from api.readings.views import router as readings_router
from api.uploads.views import router as uploads_router

API_PREFIX = "/api/v1"


def build_router() -> APIRouter:
    router = APIRouter(prefix=API_PREFIX, responses=PROBLEM_RESPONSES)
    router.include_router(health_router)
    router.include_router(plants_router)
    router.include_router(readings_router)
    router.include_router(uploads_router)
    router.include_router(keys_router)
    # Domains built alongside (results, alerts, ...) register here when present.
    for module_name in (
        "api.results.views",
        "api.baselines.views",
        "api.alerts.views",
        "api.webhooks.views",
        "api.uncertainty.views",
    ):
        extra = _optional_router(module_name)
        if extra is not None:
            router.include_router(extra)
    return router


def _optional_router(module_name: str) -> APIRouter | None:
    import importlib
    import importlib.util

    try:
        if importlib.util.find_spec(module_name) is None:
            return None
    except ModuleNotFoundError:  # the parent package does not exist yet
        return None
    module = importlib.import_module(module_name)
    return getattr(module, "router", None)
