"""Domain errors and their one translation to RFC 9457 problem details.

Services raise a :class:`ProblemError` subclass (never ``HTTPException``); one handler
turns it into ``application/problem+json``::

    {"type": "urn:lostwork:problem:invalid-readings", "title": "Invalid readings",
     "status": 422, "detail": "2 of 5 readings were rejected",
     "errors": [{"index": 3, "field": "value", "message": "..."}]}

Every error item says where: ``row`` and ``column`` (files), ``field`` (a dotted path in
a JSON or YAML document), ``index`` (position in a batch). FastAPI's own request
validation errors and Starlette's HTTP errors (404 for an unknown path, 405) get the
same shape, so a client needs one error parser.
"""

from __future__ import annotations

import logging
from collections.abc import Sequence
from http import HTTPStatus
from typing import Any

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse
from pydantic import BaseModel, ConfigDict, SerializerFunctionWrapHandler, model_serializer
from starlette.exceptions import HTTPException as StarletteHTTPException

log = logging.getLogger(__name__)

PROBLEM_MEDIA_TYPE = "application/problem+json"
TYPE_PREFIX = "urn:lostwork:problem:"


class ErrorItem(BaseModel):
    """One located error."""

    model_config = ConfigDict(extra="allow")

    row: int | None = None
    """1-based line number in an uploaded file (the header is line 1)."""
    column: str | None = None
    """Column name in an uploaded file."""
    field: str | None = None
    """Dotted path in a JSON or YAML document (``units.boiler-1.inputs.steam_flow``)."""
    index: int | None = None
    """0-based position in a submitted batch."""
    message: str

    @model_serializer(mode="wrap")
    def _omit_absent(self, handler: SerializerFunctionWrapHandler) -> dict[str, Any]:
        # Only the locators that apply are sent: {"index": 3, "field": "value", ...}.
        return {k: v for k, v in handler(self).items() if v is not None}


class Problem(BaseModel):
    """RFC 9457 problem details, with lostwork's ``errors`` extension member."""

    model_config = ConfigDict(extra="allow")

    type: str
    title: str
    status: int
    detail: str | None = None
    instance: str | None = None
    errors: list[ErrorItem] = []


class ProblemError(Exception):
    """Base of every domain error. Subclasses fix status, type and title."""

    status: int = 400
    slug: str = "bad-request"
    title: str = "Bad request"

    def __init__(
        self,
        detail: str,
        *,
        errors: Sequence[ErrorItem | dict[str, Any]] = (),
        headers: dict[str, str] | None = None,
        **extensions: Any,
    ) -> None:
        super().__init__(detail)
        self.detail = detail
        self.errors = [e if isinstance(e, ErrorItem) else ErrorItem(**e) for e in errors]
        self.headers = headers or {}
        self.extensions = extensions

    def to_problem(self, instance: str | None = None) -> dict[str, Any]:
        body: dict[str, Any] = {
            "type": TYPE_PREFIX + self.slug,
            "title": self.title,
            "status": self.status,
            "detail": self.detail,
        }
        if instance:
            body["instance"] = instance
        body["errors"] = [e.model_dump(exclude_none=True) for e in self.errors]
        body.update(self.extensions)
        return body


class InvalidInput(ProblemError):
    status, slug, title = 422, "invalid-input", "Invalid input"


class NotFound(ProblemError):
    status, slug, title = 404, "not-found", "Not found"


class Conflict(ProblemError):
    status, slug, title = 409, "conflict", "Conflict"


class Unauthenticated(ProblemError):
    status, slug, title = 401, "unauthenticated", "Authentication required"

    def __init__(self, detail: str, **kwargs: Any) -> None:
        kwargs.setdefault("headers", {"WWW-Authenticate": "Bearer"})
        super().__init__(detail, **kwargs)


class Forbidden(ProblemError):
    status, slug, title = 403, "forbidden", "Not allowed"


class ContentTooLarge(ProblemError):
    status, slug, title = 413, "content-too-large", "Content too large"


class UnsupportedMediaType(ProblemError):
    status, slug, title = 415, "unsupported-media-type", "Unsupported media type"


def problem_response(
    body: dict[str, Any], status: int, headers: dict[str, str] | None = None
) -> JSONResponse:
    return JSONResponse(body, status_code=status, headers=headers, media_type=PROBLEM_MEDIA_TYPE)


def _field_path(loc: Sequence[int | str]) -> tuple[str, int | None]:
    """``("body", "readings", 3, "value")`` -> ``("readings[3].value", 3)``."""
    parts = list(loc)
    if parts and parts[0] in {"body", "query", "path", "header", "cookie"}:
        where = parts.pop(0)
        if not parts:
            return str(where), None
    text, index = "", None
    for part in parts:
        if isinstance(part, int):
            text += f"[{part}]"
            index = part if index is None else index
        else:
            text += ("." if text else "") + str(part)
    return text, index


async def _handle_problem(request: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, ProblemError)
    return problem_response(exc.to_problem(request.url.path), exc.status, exc.headers)


async def _handle_validation(request: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, RequestValidationError)
    errors = []
    for err in exc.errors():
        if err.get("type") == "json_invalid":
            position = err["loc"][-1] if err.get("loc") else "?"
            reason = (err.get("ctx") or {}).get("error", "malformed")
            errors.append(
                {
                    "field": "body",
                    "message": f"the body is not valid JSON: {reason} at character {position}",
                }
            )
            continue
        field, index = _field_path(err.get("loc", ()))
        item: dict[str, Any] = {"field": field, "message": f"{field}: {err.get('msg')}"}
        if index is not None:
            item["index"] = index
        errors.append(item)
    fields = ", ".join(dict.fromkeys(e["field"] for e in errors))
    problem = InvalidInput(f"The request is not valid: {fields}", errors=errors)
    return problem_response(problem.to_problem(request.url.path), 422)


async def _handle_http(request: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, StarletteHTTPException)
    phrase = HTTPStatus(exc.status_code).phrase
    body = {
        "type": "about:blank",
        "title": phrase,
        "status": exc.status_code,
        "detail": exc.detail if isinstance(exc.detail, str) else phrase,
        "instance": request.url.path,
        "errors": [],
    }
    return problem_response(body, exc.status_code, getattr(exc, "headers", None))


async def _handle_unexpected(request: Request, exc: Exception) -> JSONResponse:
    log.exception("unhandled error on %s %s", request.method, request.url.path)
    body = {
        "type": TYPE_PREFIX + "internal-error",
        "title": "Internal server error",
        "status": 500,
        "detail": "An unexpected error occurred; it has been logged.",
        "instance": request.url.path,
        "errors": [],
    }
    return problem_response(body, 500)


def install_handlers(app: FastAPI) -> None:
    """Register the one translation of every error to problem details."""
    app.add_exception_handler(ProblemError, _handle_problem)
    app.add_exception_handler(RequestValidationError, _handle_validation)
    app.add_exception_handler(StarletteHTTPException, _handle_http)
    app.add_exception_handler(Exception, _handle_unexpected)


PROBLEM_RESPONSES: dict[int | str, dict[str, Any]] = {
    status: {"model": Problem, "content": {PROBLEM_MEDIA_TYPE: {}}, "description": phrase}
    for status, phrase in (
        (401, "Missing or unknown API key"),
        (403, "The key lacks the scope this route needs"),
        (404, "Not found"),
        (422, "Invalid input; `errors` locates each problem"),
    )
}
"""One error-response model for every router (OpenAPI)."""
