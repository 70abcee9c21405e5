"""Workers at the same time, and a worker killed: on SQLite and PostgreSQL.

* two workers (threads with their own connections) never process the same span or the
  same unit at once, and between them compute everything;
* a worker process killed with SIGKILL while it holds a lease and an open transaction
  loses nothing: its lease expires, another worker resumes after the last committed
  chunk, and every interval ends with exactly one row per metric;
* the embedded worker thread computes what ingest queues, and stops on request.
"""

from __future__ import annotations

import datetime as dt
import os
import signal
import subprocess
import sys
import textwrap
import threading
import time
from pathlib import Path

import numpy as np
import pytest
from sqlalchemy import func, select

from api.pipeline import worker
from api.pipeline.models import WorkSpan
from api.pipeline.worker import Options, run_once, start_embedded
from api.plants.models import Unit
from api.readings.dirty import mark_units_dirty
from api.results.metrics import registered_metrics
from api.results.models import ResultValue
from engine.units.boiler import KIND as BOILER
from tests.api.factories import T0, plant_document
from tests.api.test_pipeline import expected_from_engine, push, readings, stored_results

MIN = 60_000
# + flags, coverage, and u_, u_random_, u95_ of the four banded results the test boiler
# produces (eta_1, eta_1_lhv, eta_2, sgen_w_per_k: api.uncertainty.metrics).
N_METRICS = len(BOILER.results) + 2 + 3 * 4
OWN = ResultValue.metric.not_in(registered_metrics("boiler"))
"""The pipeline's own rows (later stages registered for the kind write theirs too)."""
PROJECT = Path(__file__).resolve().parents[2]


@pytest.fixture
def ingest(make_key) -> dict:
    return make_key("ingest")


@pytest.fixture
def three_boilers(client, admin) -> list[str]:
    """The test plant with three boilers on the same tags."""
    doc = plant_document()
    unit = doc["units"]["boiler-a"]
    doc["units"] = {slug: dict(unit, name=slug) for slug in ("boiler-a", "boiler-b", "boiler-c")}
    response = client.post("/api/v1/plants", json=doc, headers=admin)
    assert response.status_code == 200, response.text
    return ["boiler-a", "boiler-b", "boiler-c"]


def test_two_workers_never_process_the_same_span(
    client, three_boilers, ingest, session_factory, monkeypatch
) -> None:
    push(client, ingest, readings(20, step_s=60), step_s=60)
    with session_factory() as s:
        s.execute(WorkSpan.__table__.delete())  # replace the ingest spans by known ones
        unit_ids = list(s.scalars(select(Unit.id).order_by(Unit.slug)))
        # Per unit four separate spans of two minutes, gaps between (never merged).
        spans = [(u, T0 + k * 5 * MIN, T0 + (k * 5 + 2) * MIN) for u in unit_ids for k in range(4)]
        mark_units_dirty(session=s, spans=spans, reason="ingest")
        s.commit()

    # Both workers must be inside a computation at the same moment at least once.
    barrier = threading.Barrier(2, timeout=30)
    busy: dict[int, str] = {}
    overlaps: list[str] = []
    lock = threading.Lock()
    real = worker.compute_range

    def observed(session, config, start, end, *args, **kwargs):
        me = threading.current_thread().name
        with lock:
            if busy.get(config.unit_id) not in (None, me):
                overlaps.append(f"unit {config.unit_id}: {busy[config.unit_id]} and {me}")
            busy[config.unit_id] = me
        if not getattr(threading.current_thread(), "met", False):
            threading.current_thread().met = True  # type: ignore[attr-defined]
            barrier.wait()
        try:
            time.sleep(0.02)
            return real(session, config, start, end, *args, **kwargs)
        finally:
            with lock:
                busy.pop(config.unit_id, None)

    monkeypatch.setattr(worker, "compute_range", observed)
    processed: dict[str, list[tuple[int, int, int]]] = {"A": [], "B": []}
    errors: list[BaseException] = []

    def run(name: str) -> None:
        try:
            run_once(
                session_factory,
                name,
                after_chunk=lambda c, lo, hi: processed[name].append((c.span_id, c.unit_id, lo)),
            )
        except BaseException as exc:  # surfaced below
            errors.append(exc)

    threads = [threading.Thread(target=run, args=(n,), name=n) for n in "AB"]
    for t in threads:
        t.start()
    for t in threads:
        t.join(120)
    assert errors == [] and overlaps == []
    ids_a = {span for span, _, _ in processed["A"]}
    ids_b = {span for span, _, _ in processed["B"]}
    assert ids_a and ids_b and not ids_a & ids_b
    assert len(ids_a | ids_b) == 12
    with session_factory() as s:
        assert set(s.scalars(select(WorkSpan.state))) == {"done"}
        # Per unit: 4 spans x (2 minutes + 1 minute of hold) computed.
        assert s.scalar(select(func.count()).select_from(ResultValue).where(OWN)) == (
            3 * 4 * 3 * N_METRICS
        )


CHILD = textwrap.dedent(
    """
    import sys, time
    from api.core.db import create_db_engine, make_session_factory
    from api.pipeline import worker

    factory = make_session_factory(create_db_engine(sys.argv[1]))
    real = worker.replace_results
    calls = []

    def slow(session, unit_id, start, end, frame, **kwargs):
        written = real(session, unit_id, start, end, frame, **kwargs)
        calls.append(start)
        if len(calls) == 2:
            print("inside-second-chunk", flush=True)  # rows written, not committed
            time.sleep(120)
        return written

    worker.replace_results = slow
    worker.run_once(
        factory, "doomed", options=worker.Options(chunk_seconds=120, lease_seconds=3)
    )
    """
)


@pytest.mark.slow
def test_worker_killed_mid_span_loses_and_duplicates_nothing(
    client, plant, ingest, session_factory, db_url
) -> None:
    values = readings(6, step_s=60)
    push(client, ingest, values, step_s=60)
    env = dict(os.environ, PYTHONPATH=str(PROJECT))
    child = subprocess.Popen(
        [sys.executable, "-c", CHILD, db_url],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env=env,
        cwd=PROJECT,
    )
    try:
        line = child.stdout.readline() if child.stdout else ""
        assert line.strip() == "inside-second-chunk", child.stderr.read() if child.stderr else ""
        child.send_signal(signal.SIGKILL)
        child.wait(30)
    finally:
        if child.poll() is None:
            child.kill()
            child.wait(30)
    assert child.returncode == -signal.SIGKILL

    with session_factory() as s:
        span = s.scalars(select(WorkSpan)).one()
        assert (span.state, span.lease_owner, span.start_ms - T0) == ("leased", "doomed", 2 * MIN)
    assert sorted(stored_results(session_factory).index - T0) == [0, MIN]

    # The lease was 3 s; a worker looking after it expires takes the span over.
    later = dt.datetime.now(dt.UTC) + dt.timedelta(seconds=4)
    assert run_once(session_factory, "heir", options=Options(clock=lambda: later)) == 1
    got = stored_results(session_factory)
    want = expected_from_engine(values, 6, step_s=60)
    assert list(got.index) == list(want.index)
    np.testing.assert_allclose(
        got["eta_1"].to_numpy(float), want["eta_1"].to_numpy(float), rtol=1e-9
    )
    with session_factory() as s:
        assert s.scalar(select(func.count()).select_from(ResultValue).where(OWN)) == 6 * N_METRICS
        assert s.scalar(select(WorkSpan.state)) == "done"


def test_embedded_worker_computes_what_ingest_queues_and_stops(
    client, plant, ingest, session_factory
) -> None:
    handle = start_embedded(session_factory=session_factory, poll_seconds=0.05)
    try:
        push(client, ingest, readings(3, step_s=60), step_s=60)
        deadline = time.monotonic() + 30
        while time.monotonic() < deadline:
            with session_factory() as s:
                if s.scalar(select(WorkSpan.state)) == "done":
                    break
            time.sleep(0.05)
    finally:
        handle.stop()
    assert not handle.is_alive()
    assert handle.spans_done == 1
    assert len(stored_results(session_factory)) == 3


def test_a_leased_units_backlog_does_not_hide_other_units(three_boilers, session_factory) -> None:
    from api.pipeline import queue

    with session_factory() as s:
        a, b, c = s.scalars(select(Unit.id).order_by(Unit.slug)).all()
        # Unit a: one span, then 50 more queued apart (never merged); unit b's span is the
        # newest of all, beyond the claim's candidate window of older spans.
        spans = [(a, T0 + k * 10 * MIN, T0 + (k * 10 + 1) * MIN) for k in range(51)]
        mark_units_dirty(session=s, spans=spans, reason="ingest")
        mark_units_dirty(session=s, spans=[(b, T0, T0 + MIN)], reason="ingest")
        s.commit()
        first = queue.claim_next(s, "w1")
        second = queue.claim_next(s, "w2")
        third = queue.claim_next(s, "w3")
    assert (first.unit_id, second.unit_id) == (a, b)
    assert third is None  # a is leased, b is leased, c has no work
