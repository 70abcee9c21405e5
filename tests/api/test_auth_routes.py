"""Every route is authenticated and scoped; a new route without a scope fails here.

The audit walks ``app.routes`` (which also holds routes hidden from the OpenAPI schema)
and cross-checks the OpenAPI path list, so nothing escapes by being undocumented.
"""

from __future__ import annotations

import re

import pytest

from api.auth.scopes import Scope
from api.deps import PUBLIC_PATHS
from api.main import create_app

# A key holding every scope but the one a route needs (admin grants everything, so a
# route needing admin is tried with read + ingest).
OTHER_SCOPES = {
    Scope.READ: ("ingest",),
    Scope.INGEST: ("read",),
    Scope.ADMIN: ("read", "ingest"),
}


def all_routes(app):
    """Every route the app serves, included routers flattened (FastAPI >= 0.16x keeps
    included routers as nodes of ``app.routes``; ``iter_route_contexts`` walks them)."""
    try:
        from fastapi.routing import iter_route_contexts
    except ImportError:
        return list(app.routes)
    return list(iter_route_contexts(app.routes))


def scopes_of(route) -> list[Scope]:
    found: list[Scope] = []

    def walk(dependant) -> None:
        scope = getattr(dependant.call, "lostwork_scope", None)
        if scope is not None:
            found.append(scope)
        for sub in dependant.dependencies:
            walk(sub)

    walk(route.dependant)
    return found


def concrete(path: str) -> str:
    return re.sub(r"\{[^}]+\}", "1", path)


def protected_routes() -> list[tuple[str, str, Scope]]:
    app = create_app(mount_dashboard=False)
    routes = []
    for route in all_routes(app):
        if route.path in PUBLIC_PATHS:
            continue
        assert getattr(route, "dependant", None) is not None, (
            f"{route.path} is neither public nor an API route"
        )
        scopes = scopes_of(route)
        assert len(scopes) == 1, f"{sorted(route.methods)} {route.path} declares scopes {scopes}"
        for method in sorted(route.methods):
            routes.append((method, route.path, scopes[0]))
    return routes


PROTECTED = protected_routes()


def test_the_audit_sees_every_documented_route() -> None:
    app = create_app(mount_dashboard=False)
    documented = {
        (method.upper(), path) for path, item in app.openapi()["paths"].items() for method in item
    }
    audited = {(method, path) for method, path, _ in PROTECTED}
    public = {
        (m, r.path) for r in all_routes(app) if r.path in PUBLIC_PATHS for m in (r.methods or ())
    }
    assert documented - public == audited - public
    assert documented <= audited | public
    assert len(PROTECTED) >= 15


def test_only_the_listed_routes_are_public() -> None:
    app = create_app(mount_dashboard=False)
    public = sorted(r.path for r in all_routes(app) if r.path in PUBLIC_PATHS)
    assert public == ["/api/v1/health", "/docs", "/docs/oauth2-redirect", "/openapi.json", "/redoc"]


@pytest.mark.parametrize(("method", "path", "scope"), PROTECTED, ids=lambda v: str(v))
def test_route_refuses_missing_and_insufficient_keys(client, make_key, method, path, scope) -> None:
    url = concrete(path)
    anonymous = client.request(method, url)
    assert anonymous.status_code == 401, anonymous.text
    assert anonymous.headers["content-type"] == "application/problem+json"
    assert anonymous.headers["www-authenticate"] == "Bearer"
    assert anonymous.json()["detail"].startswith("an API key is required")

    wrong = client.request(method, url, headers=make_key(*OTHER_SCOPES[scope]))
    assert wrong.status_code == 403, wrong.text
    assert wrong.json()["detail"].startswith(f"this route needs the {scope.value!r} scope")

    right = client.request(method, url, headers=make_key(scope.value))
    assert right.status_code not in (401, 403), right.text


def test_admin_implies_every_scope(client, make_key) -> None:
    response = client.get("/api/v1/plants", headers=make_key("admin"))
    assert response.status_code == 200


def test_key_in_x_api_key_header(client, make_key) -> None:
    token = make_key("read")["Authorization"].removeprefix("Bearer ")
    response = client.get("/api/v1/plants", headers={"X-API-Key": token})
    assert response.status_code == 200


@pytest.mark.parametrize(
    ("token", "detail"),
    [
        ("not-a-key", "malformed API key: expected lw_<prefix>_<secret>"),
        ("lw_00000000_abc", "unknown API key"),
    ],
)
def test_bad_keys(client, token, detail) -> None:
    response = client.get("/api/v1/plants", headers={"Authorization": f"Bearer {token}"})
    assert (response.status_code, response.json()["detail"]) == (401, detail)


def test_wrong_secret_with_a_real_prefix(client, make_key) -> None:
    token = make_key("read")["Authorization"].removeprefix("Bearer ")
    forged = token[:-4] + ("AAAA" if not token.endswith("AAAA") else "BBBB")
    response = client.get("/api/v1/plants", headers={"Authorization": f"Bearer {forged}"})
    assert (response.status_code, response.json()["detail"]) == (401, "unknown API key")


def test_key_lifecycle_through_the_api(client, admin) -> None:
    created = client.post(
        "/api/v1/keys", json={"name": "historian", "scopes": ["ingest"]}, headers=admin
    )
    assert created.status_code == 201
    body = created.json()
    assert body["scopes"] == ["ingest"] and body["key"].startswith(f"lw_{body['prefix']}_")
    listed = client.get("/api/v1/keys", headers=admin).json()["keys"]
    assert "key" not in listed[-1] and listed[-1]["name"] == "historian"
    revoked = client.delete(f"/api/v1/keys/{body['id']}", headers=admin)
    assert revoked.json()["revoked_at"] is not None
    use = client.get("/api/v1/plants", headers={"X-API-Key": body["key"]})
    assert (use.status_code, use.json()["detail"]) == (401, "this API key has been revoked")


def test_unknown_scope_is_refused(client, admin) -> None:
    response = client.post("/api/v1/keys", json={"name": "x", "scopes": ["root"]}, headers=admin)
    assert response.status_code == 422
    assert response.json()["errors"][0]["field"] == "scopes[0]"


def test_only_a_hash_of_the_key_is_stored(session, make_key) -> None:
    import hashlib

    from sqlalchemy import select

    from api.auth.models import ApiKey

    token = make_key("read")["Authorization"].removeprefix("Bearer ")
    row = session.scalars(select(ApiKey)).one()
    assert row.secret_sha256 == hashlib.sha256(token.encode()).hexdigest()
    assert token not in {row.name, row.prefix, row.secret_sha256}
