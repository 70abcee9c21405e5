"""The compute worker: claim a dirty span, compute it chunk by chunk, commit each chunk.

Entry points:

* :func:`run_once` — process spans until the queue is empty (or a limit); used by the
  threads below, by ``lostwork worker`` and ``lostwork recompute``, and by tests;
* :func:`start_embedded` — a daemon thread polling the queue inside ``lostwork serve``;
  returns a handle with ``stop()``.

Each chunk (one day by default, to bound memory) is one transaction: compute from the
readings, then check the lease is still ours, replace the results of the chunk's range,
advance the span, commit. See :mod:`api.pipeline.queue` for why nothing is lost or
duplicated when a worker dies.
"""

from __future__ import annotations

import datetime as dt
import logging
import os
import socket
import threading
import uuid
from collections.abc import Callable
from dataclasses import dataclass, field
from importlib.metadata import PackageNotFoundError, version
from typing import Any

from sqlalchemy.dialects import postgresql, sqlite
from sqlalchemy.orm import Session, sessionmaker

from api.alerts.evaluate import evaluate_after_results
from api.baselines.stage import apply_baselines
from api.core.db import lock_for_write, utcnow
from api.core.problems import NotFound
from api.pipeline import queue
from api.pipeline.compute import Averaging, compute_range
from api.pipeline.queue import Claim, Clock
from api.plants.service import load_unit_config
from api.results.metrics import registered_metrics
from api.results.models import ResultMeta
from api.results.store import replace_results
from api.uncertainty.drift import judge_drift
from engine.catalogue import get_kind
from engine.steam import FORMULATION

log = logging.getLogger("lostwork.pipeline")

CHUNK_SECONDS = 86_400
"""Longest range computed in one transaction (one day). [s]"""
POLL_SECONDS = 1.0
"""Pause of an idle worker thread between looks at the queue. [s]"""
KEEP_DONE = dt.timedelta(days=1)
"""How long finished spans stay in the queue table (for inspection) before pruning."""
PRUNE_EVERY_SECONDS = 600.0

ChunkCallback = Callable[[Claim, int, int], None]
"""Called after each committed chunk with the claim and the chunk's [start, end)."""

AfterCompute = Callable[[Session, int, int, int], None]
"""``(session, unit_id, start_ms, end_ms)``: runs inside a chunk's transaction after its
results are written, before the commit (baselines, rule evaluation: whatever they write
commits with the results or not at all). An exception fails the chunk, which is retried."""

_after_compute: list[AfterCompute] = []


def register_after_compute(hook: AfterCompute) -> None:
    """Run ``hook`` in every chunk transaction, after the results are written."""
    if hook not in _after_compute:
        _after_compute.append(hook)


def unregister_after_compute(hook: AfterCompute) -> None:
    if hook in _after_compute:
        _after_compute.remove(hook)


# Baselines first: expected values, drift and CUSUM are what drift and CUSUM rules read.
register_after_compute(apply_baselines)
# Then whether each drift exceeds the uncertainty (reads the baselines' columns; rules
# may read what it writes).
register_after_compute(judge_drift)
# Alert rules judge every chunk's results in its transaction (in a savepoint of their own).
register_after_compute(evaluate_after_results)


def _engine_version() -> str:
    try:
        return version("lostwork")
    except PackageNotFoundError:
        return "unknown"


def default_owner() -> str:
    """``host:pid:random`` — unique per worker, readable in the queue table."""
    return f"{socket.gethostname()}:{os.getpid()}:{uuid.uuid4().hex[:8]}"


@dataclass
class Options:
    """How a worker computes; the defaults suit production."""

    lease_seconds: float = queue.LEASE_SECONDS
    chunk_seconds: int = CHUNK_SECONDS
    averaging: Averaging = field(default_factory=Averaging)
    clock: Clock = utcnow


class LeaseLost(RuntimeError):
    """The span was claimed by another worker after our lease expired."""


def _write_meta(session: Session, unit_id: int, kind: str, now: dt.datetime) -> None:
    values = {
        "unit_id": unit_id,
        "kind": kind,
        "formulation": FORMULATION,
        "engine_version": _engine_version(),
        "computed_at": now,
    }
    dialect = session.get_bind().dialect.name
    insert = postgresql.insert if dialect == "postgresql" else sqlite.insert
    statement = insert(ResultMeta).values(**values)
    statement = statement.on_conflict_do_update(
        index_elements=[ResultMeta.unit_id],
        set_={
            k: statement.excluded[k]
            for k in ("kind", "formulation", "engine_version", "computed_at")
        },
    )
    session.execute(statement)


def process_claim(
    session_factory: sessionmaker[Session],
    claim: Claim,
    options: Options,
    *,
    after_chunk: ChunkCallback | None = None,
    should_stop: Callable[[], bool] = lambda: False,
) -> bool:
    """Compute a claimed span chunk by chunk. True when the span is done."""
    chunk_ms = max(1, options.chunk_seconds * 1000 // claim.interval_ms) * claim.interval_ms
    start = claim.start_ms
    while start < claim.end_ms:
        if should_stop():
            with session_factory() as session:
                queue.release(session, claim, clock=options.clock)
            return False
        end = min(claim.end_ms, start + chunk_ms)
        try:
            with session_factory() as session:
                try:
                    config = load_unit_config(session=session, unit_id=claim.unit_id)
                except NotFound:
                    log.info(
                        "unit %s no longer exists; span %s dropped", claim.unit_id, claim.span_id
                    )
                    return True  # its spans went with it (ON DELETE CASCADE)
                kind = get_kind(config.kind)
                frame = compute_range(session, config, start, end, options.averaging, kind)
                if session.get_bind().dialect.name != "postgresql":
                    lock_for_write(session)
                if not queue.advance(
                    session, claim, end, lease_seconds=options.lease_seconds, clock=options.clock
                ):
                    session.rollback()
                    raise LeaseLost(f"span {claim.span_id}: lease of {claim.owner} lost")
                own = set(frame.columns)
                keep = registered_metrics(config.kind) - own
                replace_results(session, claim.unit_id, start, end, frame, keep=keep)
                _write_meta(session, claim.unit_id, config.kind, options.clock())
                for hook in _after_compute:
                    hook(session, claim.unit_id, start, end)
                session.commit()
        except LeaseLost:
            log.warning("span %s: lease lost to another worker; stopping", claim.span_id)
            return False
        except Exception as exc:
            log.exception("span %s of unit %s failed", claim.span_id, claim.unit_id)
            with session_factory() as session:
                state = queue.fail(
                    session, claim, f"{type(exc).__name__}: {exc}", clock=options.clock
                )
            log.warning("span %s is now %s", claim.span_id, state)
            return False
        if after_chunk is not None:
            after_chunk(claim, start, end)
        start = end
    return True


def run_once(
    session_factory: sessionmaker[Session],
    owner: str | None = None,
    *,
    max_spans: int | None = None,
    unit_id: int | None = None,
    options: Options | None = None,
    after_chunk: ChunkCallback | None = None,
    should_stop: Callable[[], bool] = lambda: False,
) -> int:
    """Claim and compute spans until none is claimable (or ``max_spans``).

    Parameters
    ----------
    session_factory : sessionmaker
        Opens the worker's own sessions (one per claim and per chunk).
    owner : str, optional
        Lease owner name; :func:`default_owner` when omitted.
    max_spans : int, optional
        Stop after this many claims.
    unit_id : int, optional
        Only spans of this unit.
    options : Options, optional
        Lease, chunk length, averaging and clock.
    after_chunk : callable, optional
        Progress callback ``(claim, start_ms, end_ms)`` after each committed chunk.
    should_stop : callable, optional
        Checked between chunks; when true the current span is released and the call
        returns.

    Returns
    -------
    int
        Spans processed to the end.
    """
    owner = owner or default_owner()
    options = options or Options()
    done = 0
    claims = 0
    while max_spans is None or claims < max_spans:
        if should_stop():
            break
        with session_factory() as session:
            if not queue.has_work(session, now=options.clock()):
                break
            claim = queue.claim_next(
                session,
                owner,
                lease_seconds=options.lease_seconds,
                hold_intervals=options.averaging.max_hold_intervals,
                unit_id=unit_id,
                clock=options.clock,
            )
        if claim is None:
            break
        claims += 1
        if process_claim(
            session_factory, claim, options, after_chunk=after_chunk, should_stop=should_stop
        ):
            done += 1
    return done


class WorkerThread(threading.Thread):
    """A daemon thread running :func:`run_once` in a loop until :meth:`stop`."""

    def __init__(
        self,
        session_factory: sessionmaker[Session],
        *,
        owner: str | None = None,
        poll_seconds: float = POLL_SECONDS,
        options: Options | None = None,
    ) -> None:
        super().__init__(name="lostwork-worker", daemon=True)
        self.session_factory = session_factory
        self.owner = owner or default_owner()
        self.poll_seconds = poll_seconds
        self.options = options or Options()
        self.spans_done = 0
        self._stop_event = threading.Event()
        self._last_prune = 0.0

    def run(self) -> None:
        log.info("compute worker %s started", self.owner)
        while not self._stop_event.is_set():
            try:
                self.spans_done += run_once(
                    self.session_factory,
                    self.owner,
                    options=self.options,
                    should_stop=self._stop_event.is_set,
                )
                self._maybe_prune()
            except Exception:  # a lost database connection must not end the thread
                log.exception("compute worker %s: error; retrying", self.owner)
            self._stop_event.wait(self.poll_seconds)
        log.info("compute worker %s stopped", self.owner)

    def _maybe_prune(self) -> None:
        now = self.options.clock().timestamp()
        if now - self._last_prune < PRUNE_EVERY_SECONDS:
            return
        self._last_prune = now
        with self.session_factory() as session:
            queue.prune_done(session, older_than=KEEP_DONE, clock=self.options.clock)

    @property
    def stopping(self) -> bool:
        return self._stop_event.is_set()

    def request_stop(self) -> None:
        """Ask the thread to finish its current chunk, release its span, and end (no wait;
        safe in a signal handler)."""
        self._stop_event.set()

    def stop(self, timeout: float | None = 30.0) -> None:
        """:meth:`request_stop`, then wait up to ``timeout`` seconds for the thread."""
        self._stop_event.set()
        if self.is_alive() and threading.current_thread() is not self:
            self.join(timeout)


def start_embedded(
    settings: Any = None,
    session_factory: sessionmaker[Session] | None = None,
    *,
    poll_seconds: float = POLL_SECONDS,
) -> WorkerThread:
    """Start the worker thread of ``lostwork serve``; call ``stop()`` on shutdown.

    ``session_factory`` is the app's (shared engine); without it one is made from
    ``settings.database_url``.
    """
    if session_factory is None:
        from api.core.config import get_settings
        from api.core.db import create_db_engine, make_session_factory

        settings = settings or get_settings()
        session_factory = make_session_factory(create_db_engine(settings.database_url))
    thread = WorkerThread(session_factory, poll_seconds=poll_seconds)
    thread.start()
    return thread
