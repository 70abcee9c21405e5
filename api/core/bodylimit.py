"""Request body limits that answer 413 as problem details naming the limit.

Starlette's own limiter answers in plain text; lostwork clients parse one error shape.
A declared Content-Length over the limit is refused before the body is read; a chunked
body without a length is read up to the limit and refused past it.
"""

from __future__ import annotations

import json
from collections.abc import Callable

from starlette.types import ASGIApp, Message, Receive, Scope, Send

from api.core.problems import PROBLEM_MEDIA_TYPE, ContentTooLarge


class BodyLimitMiddleware:
    def __init__(self, app: ASGIApp, limit_for: Callable[[str], tuple[int, str]]) -> None:
        """``limit_for(path) -> (bytes, setting name)``."""
        self.app = app
        self.limit_for = limit_for

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http" or scope["method"] in ("GET", "HEAD", "OPTIONS"):
            await self.app(scope, receive, send)
            return
        limit, setting = self.limit_for(scope["path"])
        length = None
        for name, value in scope.get("headers", []):
            if name == b"content-length":
                try:
                    length = int(value)
                except ValueError:
                    length = None
        if length is not None:
            if length > limit:
                await self._refuse(scope, send, length, limit, setting)
                return
            await self.app(scope, receive, send)
            return
        chunks: list[bytes] = []
        size = 0
        while True:
            message = await receive()
            if message["type"] != "http.request":
                break
            chunks.append(message.get("body", b""))
            size += len(chunks[-1])
            if size > limit:
                await self._refuse(scope, send, size, limit, setting, at_least=True)
                return
            if not message.get("more_body", False):
                break
        replayed = False

        async def replay() -> Message:
            nonlocal replayed
            if not replayed:
                replayed = True
                return {"type": "http.request", "body": b"".join(chunks), "more_body": False}
            return await receive()

        await self.app(scope, replay, send)

    @staticmethod
    async def _refuse(
        scope: Scope, send: Send, size: int, limit: int, setting: str, at_least: bool = False
    ) -> None:
        problem = ContentTooLarge(
            f"the request body is {'more than ' if at_least else ''}{size} bytes; "
            f"the limit for {scope['path']} is {limit} bytes ({limit / 2**20:g} MiB, "
            f"setting {setting})",
            limit_bytes=limit,
        )
        body = json.dumps(problem.to_problem(scope["path"])).encode()
        await send(
            {
                "type": "http.response.start",
                "status": 413,
                "headers": [
                    (b"content-type", PROBLEM_MEDIA_TYPE.encode()),
                    (b"content-length", str(len(body)).encode()),
                    (b"connection", b"close"),
                ],
            }
        )
        await send({"type": "http.response.body", "body": body})
