"""A small webhook receiver for trying lostwork out: verifies the Standard Webhooks
signature, drops duplicates by ``webhook-id``, hands each new event to a callback.

``lostwork webhook-receiver`` runs it and prints what arrives; it is also a worked
example of what a receiver must do (see the README): read the raw body, verify it
before parsing, check the timestamp, deduplicate on the id, answer 2xx quickly.
"""

from __future__ import annotations

import json
import threading
import time
from collections import OrderedDict
from collections.abc import Callable, Sequence
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from typing import Any

from api.webhooks.signing import InvalidSignature, verify

MAX_BODY_BYTES = 1 << 20
REMEMBERED_IDS = 10_000
"""Ids kept for deduplication (oldest forgotten first)."""

OnEvent = Callable[[str, dict[str, Any]], None]
OnReject = Callable[[str], None]


class Receiver(ThreadingHTTPServer):
    daemon_threads = True

    def __init__(
        self,
        address: tuple[str, int],
        secrets: Sequence[str],
        on_event: OnEvent,
        on_reject: OnReject = lambda reason: None,
    ) -> None:
        super().__init__(address, _Handler)
        self.secrets = list(secrets)
        self.on_event = on_event
        self.on_reject = on_reject
        self.seen: OrderedDict[str, None] = OrderedDict()
        self.lock = threading.Lock()
        self.duplicates = 0

    def first_time(self, msg_id: str) -> bool:
        with self.lock:
            if msg_id in self.seen:
                self.duplicates += 1
                return False
            self.seen[msg_id] = None
            if len(self.seen) > REMEMBERED_IDS:
                self.seen.popitem(last=False)
            return True


class _Handler(BaseHTTPRequestHandler):
    server: Receiver

    def do_POST(self) -> None:  # noqa: N802 - http.server's naming
        length = int(self.headers.get("content-length") or 0)
        if length > MAX_BODY_BYTES:
            self._answer(413, "too large")
            return
        body = self.rfile.read(length)
        headers = {k: v for k, v in self.headers.items()}
        msg_id = None
        reasons = []
        for secret in self.server.secrets:
            try:
                msg_id = verify(secret, headers, body, now=time.time())
                break
            except InvalidSignature as exc:
                reasons.append(str(exc))
        if msg_id is None:
            self.server.on_reject("; ".join(dict.fromkeys(reasons)) or "no secret configured")
            self._answer(401, "signature not verified")
            return
        if self.server.first_time(msg_id):
            try:
                payload = json.loads(body)
            except ValueError:
                payload = {"raw": body.decode("utf-8", "replace")}
            self.server.on_event(msg_id, payload)
        self._answer(204, None)

    def _answer(self, status: int, text: str | None) -> None:
        data = (text or "").encode()
        self.send_response(status)
        self.send_header("content-length", str(len(data)))
        self.end_headers()
        if data:
            self.wfile.write(data)

    def log_message(self, format: str, *args: Any) -> None:  # noqa: A002
        return  # the callbacks report; no access log on stderr


def describe(payload: dict[str, Any]) -> str:
    """One line per event for the console."""
    kind = payload.get("type", "?")
    if kind == "webhook.test":
        return f"{kind}: {payload.get('message', '')}"
    unit = (payload.get("unit") or {}).get("slug", "?")
    alert = payload.get("alert") or {}
    text = alert.get("message") or ""
    extra = ""
    if kind == "alert.acknowledged":
        extra = f" — by {alert.get('acknowledged_by')}: {alert.get('note')}"
    return f"{kind} [{payload.get('severity', '?')}] {unit}: {text}{extra}"
