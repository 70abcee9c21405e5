"""The FastAPI application: ``create_app()`` for tests and embedding, ``app`` for uvicorn."""

from __future__ import annotations

import importlib
import importlib.util
import logging
from collections.abc import AsyncIterator
from contextlib import asynccontextmanager
from typing import Any

from fastapi import FastAPI
from fastapi.openapi.utils import get_openapi
from sqlalchemy.orm import Session, sessionmaker

from api.core.bodylimit import BodyLimitMiddleware
from api.core.config import Settings, get_settings
from api.core.db import create_db_engine, make_session_factory
from api.core.problems import install_handlers
from api.plants.fileformat import PlantFile
from api.router import API_PREFIX, build_router

log = logging.getLogger("lostwork")

UPLOAD_OVERHEAD_BYTES = 64 * 1024
"""Room for the multipart envelope around a file of exactly the upload limit."""

DESCRIPTION = """
lostwork computes first- and second-law efficiency, entropy generation and lost work per
unit and interval from historian readings.

Authenticate with `Authorization: Bearer <key>` or `X-API-Key: <key>`. Errors are RFC 9457
problem details (`application/problem+json`) whose `errors` list locates each problem.

lostwork monitors; it is not a control or safety system.
"""


def _start_worker(app: FastAPI) -> Any:
    """Start the embedded compute worker when the pipeline provides one."""
    settings: Settings = app.state.settings
    if not settings.embedded_worker:
        log.info("embedded worker disabled (LOSTWORK_EMBEDDED_WORKER=false)")
        return None
    if importlib.util.find_spec("api.pipeline.worker") is None:
        log.warning("embedded worker not started: api.pipeline.worker is not installed")
        return None
    worker = importlib.import_module("api.pipeline.worker")
    if not hasattr(worker, "start_embedded"):
        log.warning("embedded worker not started: api.pipeline.worker has no start_embedded")
        return None
    log.info("starting the embedded compute worker")
    return worker.start_embedded(session_factory=app.state.session_factory, settings=settings)


def _mount_dashboard(app: FastAPI) -> None:
    """Let the dashboard (issue 7) attach itself to this app if it is installed."""
    if importlib.util.find_spec("dashboard.app") is None:
        return
    try:
        module = importlib.import_module("dashboard.app")
    except Exception:  # the API must come up even when the dashboard cannot
        log.exception("dashboard not mounted: importing dashboard.app failed")
        return
    mount = getattr(module, "mount", None)
    if callable(mount):
        mount(app)


NOTIFIER_THREADS = ("api.alerts.timer", "api.webhooks.worker")
"""Modules whose ``start_embedded(settings=, session_factory=)`` run beside the compute
worker: the staleness timer and the webhook delivery worker."""


def _start_notifiers(app: FastAPI) -> list[Any]:
    settings: Settings = app.state.settings
    if not settings.embedded_worker:
        return []
    handles = []
    for name in NOTIFIER_THREADS:
        if importlib.util.find_spec(name) is not None:
            module = importlib.import_module(name)
            handles.append(
                module.start_embedded(settings=settings, session_factory=app.state.session_factory)
            )
    return handles


@asynccontextmanager
async def _lifespan(app: FastAPI) -> AsyncIterator[None]:
    handles = [_start_worker(app), *_start_notifiers(app)]
    try:
        yield
    finally:
        for handle in handles:
            if handle is not None and hasattr(handle, "stop"):
                handle.stop()
        if app.state.owns_engine:
            app.state.engine.dispose()


def create_app(
    settings: Settings | None = None,
    *,
    session_factory: sessionmaker[Session] | None = None,
    mount_dashboard: bool = True,
) -> FastAPI:
    """Build the application.

    ``session_factory`` lets tests and embedding callers share an engine; otherwise one
    is created from ``settings.database_url``.
    """
    settings = settings or get_settings()
    logging.getLogger("lostwork").setLevel(settings.log_level)
    app = FastAPI(
        title="lostwork",
        version="0.1.0",
        description=DESCRIPTION,
        lifespan=_lifespan,
    )
    app.state.settings = settings
    if session_factory is None:
        engine = create_db_engine(settings.database_url)
        app.state.engine, app.state.owns_engine = engine, True
        session_factory = make_session_factory(engine)
    else:
        app.state.engine, app.state.owns_engine = session_factory.kw.get("bind"), False
    app.state.session_factory = session_factory

    install_handlers(app)
    app.include_router(build_router())

    upload_path = f"{API_PREFIX}/uploads"

    def limit_for(path: str) -> tuple[int, str]:
        if path.rstrip("/") == upload_path:
            return settings.upload_max_bytes + UPLOAD_OVERHEAD_BYTES, "LOSTWORK_UPLOAD_MAX_BYTES"
        return settings.request_max_bytes, "LOSTWORK_REQUEST_MAX_BYTES"

    app.add_middleware(BodyLimitMiddleware, limit_for=limit_for)

    def openapi() -> dict[str, Any]:
        if app.openapi_schema is None:
            schema = get_openapi(
                title=app.title,
                version=app.version,
                description=app.description,
                routes=app.routes,
            )
            components = schema.setdefault("components", {}).setdefault("schemas", {})
            plant_file = PlantFile.model_json_schema(ref_template="#/components/schemas/{model}")
            components.update(plant_file.pop("$defs", {}))
            components["PlantFile"] = plant_file
            app.openapi_schema = schema
        return app.openapi_schema

    app.openapi = openapi  # type: ignore[method-assign]
    if mount_dashboard:
        _mount_dashboard(app)
    return app


def __getattr__(name: str) -> Any:
    # `uvicorn api.main:app` builds the app on first access, not at import time, so
    # importing this module (tests, the CLI) never opens the configured database.
    if name == "app":
        return create_app()
    raise AttributeError(name)
