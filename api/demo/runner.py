"""Backfill and live loops: what a historian connector does with the simulator's readings.

* :func:`backfill` sends a past range as fast as the sink takes it, in chunks of
  instants generated vectorised (a chunk is one numpy pass over its instants and tags;
  no Python loop runs per reading).
* :func:`live` keeps sending new instants as the simulated clock passes them: in real
  time at ``speed`` 1, ``speed`` times faster otherwise. It first catches up on the
  instants between the end of the backfill and now. A failed send is retried on the next
  pass with everything still due (store and forward), so a server restart loses nothing.
"""

from __future__ import annotations

import logging
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass

import httpx
import numpy as np

from api.demo.simulator import Simulator
from api.demo.sinks import IngestRefused, Sink, Totals

log = logging.getLogger("lostwork.demo")

CHUNK_INSTANTS = 4032
"""Instants generated per pass in a backfill (two weeks at 5 min). [-]"""
LIVE_MAX_WAIT_S = 2.0
"""Longest sleep of the live loop, so that a stop request is seen promptly. [s]"""


@dataclass
class BackfillReport:
    instants: int
    seconds: float
    totals: Totals

    @property
    def readings_per_second(self) -> float:
        return self.totals.received / self.seconds if self.seconds > 0 else float("nan")


def backfill(
    sim: Simulator,
    sink: Sink,
    start_ms: int,
    end_ms: int,
    *,
    step_s: float | None = None,
    chunk_instants: int = CHUNK_INSTANTS,
    progress: Callable[[int, int], None] | None = None,
) -> BackfillReport:
    """Send the readings of [start, end) on the grid of ``step_s`` (default the interval)."""
    began = time.perf_counter()
    t_ms = sim.times(start_ms, end_ms, step_s)
    totals = Totals()
    for lo in range(0, len(t_ms), chunk_instants):
        part = t_ms[lo : lo + chunk_instants]
        sent = sink.send(sim.generate(part).readings)
        for name in ("batches", "received", "stored", "replaced", "unchanged", "rejected"):
            setattr(totals, name, getattr(totals, name) + getattr(sent, name))
        totals.errors.extend(sent.errors[: max(0, 20 - len(totals.errors))])
        if progress is not None:
            progress(lo + len(part), len(t_ms))
    return BackfillReport(len(t_ms), time.perf_counter() - began, totals)


def live(
    sim: Simulator,
    sink: Sink,
    from_ms: int,
    *,
    step_s: float,
    speed: float = 1.0,
    stop: threading.Event,
    until_ms: int | None = None,
    clock: Callable[[], float] = time.time,
    on_batch: Callable[[np.ndarray, Totals], None] | None = None,
) -> int:
    """Send instants after ``from_ms`` as the simulated clock reaches them; returns the
    number of instants sent.

    The simulated clock starts at the wall clock's now (so that a backfill that ended a
    while ago is caught up first) and runs ``speed`` times faster. It stops when ``stop``
    is set or the clock passes ``until_ms``.
    """
    if speed <= 0:
        raise ValueError(f"speed must be positive, got {speed}")
    step_ms = int(step_s * 1000)
    wall0 = clock()
    sim0 = wall0 * 1000.0
    next_t = (int(from_ms) // step_ms + 1) * step_ms
    sent = 0
    while not stop.is_set():
        now_sim = sim0 + (clock() - wall0) * 1000.0 * speed
        if until_ms is not None:
            now_sim = min(now_sim, until_ms - 1)
        due = np.arange(next_t, int(now_sim) + 1, step_ms, dtype=np.int64)
        if due.size:
            try:
                totals = sink.send(sim.generate(due).readings)
            except (httpx.TransportError, IngestRefused) as exc:
                log.warning("live: %d instant(s) not sent yet (%s); retrying", due.size, exc)
                stop.wait(LIVE_MAX_WAIT_S)
                continue
            next_t = int(due[-1]) + step_ms
            sent += due.size
            if on_batch is not None:
                on_batch(due, totals)
        if until_ms is not None and next_t >= until_ms:
            break
        wait_s = (next_t - now_sim) / 1000.0 / speed
        stop.wait(min(max(wait_s, 0.01), LIVE_MAX_WAIT_S))
    return sent
