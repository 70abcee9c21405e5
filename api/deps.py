"""Request dependencies: the database session, settings, and the scope guard.

Every route under ``/api/v1`` declares the scope it needs with :func:`require_scope`
(or one of the ``*Key`` aliases); the test ``tests/api/test_auth_routes.py`` walks every
route and fails for one that does not, unless it is listed in ``PUBLIC_PATHS``.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from typing import Annotated, Any

from fastapi import Depends, Request
from fastapi.security import APIKeyHeader, HTTPAuthorizationCredentials, HTTPBearer
from sqlalchemy.orm import Session

from api.auth import service as auth_service
from api.auth.models import ApiKey
from api.auth.scopes import Scope, grants
from api.core.config import Settings
from api.core.problems import Forbidden, Unauthenticated

PUBLIC_PATHS = frozenset(
    {"/api/v1/health", "/docs", "/docs/oauth2-redirect", "/redoc", "/openapi.json"}
)
"""Routes reachable without a key. Everything else needs one."""


def get_db(request: Request) -> Iterator[Session]:
    """One session per request, from the app's session factory; always closed."""
    session = request.app.state.session_factory()
    try:
        yield session
    finally:
        session.close()


def get_settings(request: Request) -> Settings:
    settings: Settings = request.app.state.settings
    return settings


SessionDep = Annotated[Session, Depends(get_db)]
SettingsDep = Annotated[Settings, Depends(get_settings)]

_bearer = HTTPBearer(auto_error=False, description="`Authorization: Bearer lw_...`")
_header = APIKeyHeader(name="X-API-Key", auto_error=False, description="`X-API-Key: lw_...`")


def require_scope(scope: Scope | str) -> Callable[..., Any]:
    """A dependency that authenticates the caller and checks it holds ``scope``."""
    needed = Scope(scope)

    def dependency(
        session: SessionDep,
        bearer: Annotated[HTTPAuthorizationCredentials | None, Depends(_bearer)],
        header: Annotated[str | None, Depends(_header)],
    ) -> ApiKey:
        plaintext = bearer.credentials if bearer else header
        if not plaintext:
            raise Unauthenticated(
                "an API key is required: send 'Authorization: Bearer <key>' or 'X-API-Key: <key>'"
            )
        key = auth_service.authenticate(session=session, plaintext=plaintext)
        if not grants(key.scopes, needed):
            raise Forbidden(
                f"this route needs the {needed.value!r} scope; "
                f"the key {key.name!r} holds {', '.join(key.scopes)}"
            )
        return key

    dependency.lostwork_scope = needed  # type: ignore[attr-defined]  # read by the route audit
    dependency.__name__ = f"require_{needed.value}"
    return dependency


ReadKey = Annotated[ApiKey, Depends(require_scope(Scope.READ))]
IngestKey = Annotated[ApiKey, Depends(require_scope(Scope.INGEST))]
AdminKey = Annotated[ApiKey, Depends(require_scope(Scope.ADMIN))]
