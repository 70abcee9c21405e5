"""Helpers of the alert and webhook tests: result rows written directly, and a real
webhook receiver on 127.0.0.1 that checks every request with an independent verifier.

The verifier is the reference implementation published with the Standard Webhooks
specification (PyPI package ``standardwebhooks``, version 1.1.0): nothing of lostwork's
own signing code is used to judge lostwork's signatures.
"""

from __future__ import annotations

import json
import threading
from collections import OrderedDict
from collections.abc import Sequence
from dataclasses import dataclass, field
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from typing import Any

from sqlalchemy import insert
from sqlalchemy.orm import Session
from standardwebhooks.webhooks import Webhook, WebhookVerificationError

from api.results.models import ResultValue
from tests.api.factories import plant_document

MIN = 60_000


def write_results(
    session: Session, unit_id: int, metric: str, t0_ms: int, values: Sequence[float | None]
) -> list[int]:
    """One row per minute from ``t0_ms`` (the pipeline's long format); returns the times."""
    times = [t0_ms + i * MIN for i in range(len(values))]
    session.execute(
        insert(ResultValue),
        [
            {"unit_id": unit_id, "metric": metric, "t_ms": t, "value": v}
            for t, v in zip(times, values, strict=True)
        ],
    )
    return times


def two_boiler_document(**changes: Any) -> dict[str, Any]:
    """The test plant with a second boiler on the same tags."""
    doc = plant_document(**changes)
    unit = doc["units"]["boiler-a"]
    doc["units"] = {"boiler-a": unit, "boiler-b": dict(unit, name="Boiler B")}
    return doc


@dataclass
class Arrival:
    msg_id: str
    headers: dict[str, str]
    body: bytes
    verified_by: list[int]
    """Indexes of the receiver's secrets whose signature verified."""


@dataclass
class TestReceiver:
    """A threaded HTTP server on 127.0.0.1 that verifies, records and deduplicates.

    ``status`` is the answer to a verified request; ``hold`` (when set) keeps the
    request open until released (``got_request`` signals its arrival).
    """

    __test__ = False  # not a test class

    secrets: list[str]
    port: int = 0
    status: int = 204
    arrivals: list[Arrival] = field(default_factory=list)
    rejected: list[str] = field(default_factory=list)
    events: OrderedDict[str, dict[str, Any]] = field(default_factory=OrderedDict)
    hold: threading.Event | None = None
    got_request: threading.Event = field(default_factory=threading.Event)
    _server: ThreadingHTTPServer | None = None
    _lock: threading.Lock = field(default_factory=threading.Lock)

    @property
    def url(self) -> str:
        return f"http://127.0.0.1:{self.port}/hook"

    @property
    def duplicates(self) -> int:
        return len([a for a in self.arrivals if a.verified_by]) - len(self.events)

    def start(self) -> TestReceiver:
        receiver = self

        class Handler(BaseHTTPRequestHandler):
            def do_POST(self) -> None:  # noqa: N802
                body = self.rfile.read(int(self.headers.get("content-length") or 0))
                headers = dict(self.headers.items())
                verified = []
                for i, secret in enumerate(receiver.secrets):
                    try:
                        Webhook(secret).verify(body, headers)
                        verified.append(i)
                    except WebhookVerificationError as exc:
                        reason = str(exc)
                msg_id = headers.get("webhook-id", "")
                with receiver._lock:
                    receiver.arrivals.append(Arrival(msg_id, headers, body, verified))
                    if not verified:
                        receiver.rejected.append(reason)
                    elif msg_id not in receiver.events:
                        receiver.events[msg_id] = json.loads(body)
                receiver.got_request.set()
                if receiver.hold is not None and verified:
                    receiver.hold.wait(60)
                status = receiver.status if verified else 401
                try:
                    self.send_response(status)
                    self.send_header("content-length", "0")
                    self.end_headers()
                except OSError:
                    pass  # the sender went away while we held the request

            def log_message(self, *args: Any) -> None:
                return

        self._server = ThreadingHTTPServer(("127.0.0.1", self.port), Handler)
        self._server.daemon_threads = True
        self.port = self._server.server_address[1]
        threading.Thread(target=self._server.serve_forever, args=(0.05,), daemon=True).start()
        return self

    def stop(self) -> None:
        if self._server is not None:
            self._server.shutdown()
            self._server.server_close()
            self._server = None
