"""The delivery worker: a loop over :mod:`api.webhooks.delivery`.

* :func:`run_once` — deliver what is due until nothing is (or a limit); used by the
  thread below, by ``lostwork deliver`` and by tests;
* :func:`start_embedded` — a daemon thread inside ``lostwork serve``; ``stop()`` ends it.

At-least-once: a worker killed between posting and recording leaves a lease that
expires; the delivery is then attempted again with the same ``webhook-id``, which the
receiver uses to drop the duplicate.
"""

from __future__ import annotations

import logging
import os
import socket
import threading
import uuid
from collections.abc import Callable
from typing import Any

import httpx
from sqlalchemy.orm import Session, sessionmaker

from api.webhooks.delivery import DeliveryOptions, attempt, claim_next, has_due, new_client, record

log = logging.getLogger("lostwork.webhooks")


def default_owner() -> str:
    return f"deliver:{socket.gethostname()}:{os.getpid()}:{uuid.uuid4().hex[:8]}"


def run_once(
    session_factory: sessionmaker[Session],
    options: DeliveryOptions,
    *,
    owner: str | None = None,
    client: httpx.Client | None = None,
    max_attempts: int | None = None,
    should_stop: Callable[[], bool] = lambda: False,
) -> int:
    """Attempt due deliveries until none is due (or ``max_attempts``); returns how many
    attempts were made."""
    owner = owner or default_owner()
    own_client = client is None
    http = client or new_client(options)
    made = 0
    try:
        while (max_attempts is None or made < max_attempts) and not should_stop():
            with session_factory() as session:
                if not has_due(session, now=options.clock()):
                    break
                claimed = claim_next(session, owner, options)
            if claimed is None:
                break
            result = attempt(claimed, http, options)
            with session_factory() as session:
                record(session, claimed, result, options)
            made += 1
    finally:
        if own_client:
            http.close()
    return made


class DeliveryThread(threading.Thread):
    """A daemon thread running :func:`run_once` every ``poll_seconds`` until :meth:`stop`."""

    def __init__(
        self,
        session_factory: sessionmaker[Session],
        options: DeliveryOptions,
        *,
        poll_seconds: float = 1.0,
        owner: str | None = None,
    ) -> None:
        super().__init__(name="lostwork-deliver", daemon=True)
        self.session_factory = session_factory
        self.options = options
        self.poll_seconds = poll_seconds
        self.owner = owner or default_owner()
        self.attempts_made = 0
        self._stop_event = threading.Event()

    def run(self) -> None:
        log.info("delivery worker %s started", self.owner)
        with new_client(self.options) as client:
            while not self._stop_event.is_set():
                try:
                    self.attempts_made += run_once(
                        self.session_factory,
                        self.options,
                        owner=self.owner,
                        client=client,
                        should_stop=self._stop_event.is_set,
                    )
                except Exception:  # a lost database connection must not end the thread
                    log.exception("delivery worker %s: error; retrying", self.owner)
                self._stop_event.wait(self.poll_seconds)
        log.info("delivery worker %s stopped", self.owner)

    def stop(self, timeout: float | None = 30.0) -> None:
        self._stop_event.set()
        if self.is_alive() and threading.current_thread() is not self:
            self.join(timeout)


def start_embedded(
    settings: Any = None, session_factory: sessionmaker[Session] | None = None
) -> DeliveryThread:
    """Start the delivery thread of ``lostwork serve``; call ``stop()`` on shutdown."""
    from api.core.config import get_settings
    from api.core.db import create_db_engine, make_session_factory

    settings = settings or get_settings()
    if session_factory is None:
        session_factory = make_session_factory(create_db_engine(settings.database_url))
    thread = DeliveryThread(
        session_factory,
        DeliveryOptions.from_settings(settings),
        poll_seconds=settings.webhook_poll_seconds,
    )
    thread.start()
    return thread
