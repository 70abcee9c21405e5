"""The staleness timer: evaluates the stale rules every
``LOSTWORK_ALERT_STALE_CHECK_SECONDS`` (a thread in ``lostwork serve``; also run by
``lostwork deliver``)."""

from __future__ import annotations

import logging
import threading
from collections.abc import Callable
from typing import Any

from sqlalchemy.orm import Session, sessionmaker

from api.alerts.staleness import evaluate_staleness
from api.core.db import utcnow

log = logging.getLogger("lostwork.alerts")


class StaleTimer(threading.Thread):
    """A daemon thread calling :func:`evaluate_staleness` every ``every_seconds``."""

    def __init__(
        self,
        session_factory: sessionmaker[Session],
        *,
        every_seconds: float = 30.0,
        base_url: str | None = None,
        clock: Callable[[], Any] = utcnow,
    ) -> None:
        super().__init__(name="lostwork-stale-timer", daemon=True)
        self.session_factory = session_factory
        self.every_seconds = every_seconds
        self.base_url = base_url
        self.clock = clock
        self.ticks = 0
        self._stop_event = threading.Event()

    def run(self) -> None:
        log.info("staleness timer started (every %g s)", self.every_seconds)
        while not self._stop_event.is_set():
            try:
                with self.session_factory() as session:
                    fired, resolved = evaluate_staleness(
                        session, now=self.clock(), base_url=self.base_url
                    )
                if fired or resolved:
                    log.info("staleness: %s alert(s) fired, %s resolved", fired, resolved)
            except Exception:  # a lost database connection must not end the thread
                log.exception("staleness timer: error; retrying")
            self.ticks += 1
            self._stop_event.wait(self.every_seconds)
        log.info("staleness timer stopped")

    def stop(self, timeout: float | None = 30.0) -> None:
        self._stop_event.set()
        if self.is_alive() and threading.current_thread() is not self:
            self.join(timeout)


def start_embedded(
    settings: Any = None, session_factory: sessionmaker[Session] | None = None
) -> StaleTimer:
    """Start the timer of ``lostwork serve``; call ``stop()`` on shutdown."""
    from api.core.config import get_settings
    from api.core.db import create_db_engine, make_session_factory

    settings = settings or get_settings()
    if session_factory is None:
        session_factory = make_session_factory(create_db_engine(settings.database_url))
    timer = StaleTimer(
        session_factory,
        every_seconds=settings.alert_stale_check_seconds,
        base_url=settings.public_base_url,
    )
    timer.start()
    return timer
