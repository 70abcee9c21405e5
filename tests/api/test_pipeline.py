"""The compute pipeline end to end, on SQLite and PostgreSQL: readings pushed through the
API -> worker -> stored results, compared with the engine called directly.

Unit conversions of the test plant's tags are done by hand here, with factors exact by
definition (NIST SP 811, 2008 ed., App. B.8/B.9): 1 lb = 0.45359237 kg,
1 psi = 0.45359237 * 9.80665 / 0.0254**2 Pa, T[K] = (T[degF] - 32) / 1.8 + 273.15,
T[K] = T[degC] + 273.15, 1 bar = 1e5 Pa. Gauge pressures are against the test plant's
atmosphere of 100 kPa.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd
import pytest
from sqlalchemy import func, select

from api.pipeline import queue, worker
from api.pipeline.models import SpanState, WorkSpan
from api.pipeline.quality import DataFlag
from api.pipeline.worker import Options, run_once
from api.plants.models import Unit
from api.readings.dirty import mark_units_dirty
from api.results.metrics import registered_metrics
from api.results.models import ResultMeta, ResultValue
from engine.catalogue import ModelContext
from engine.checks import Flag
from engine.deadstate import dead_state
from engine.fuels import FuelProperties
from engine.units.boiler import KIND as BOILER
from tests.api.factories import ATMOSPHERE_PA, T0, plant_document

S = 1000
MIN = 60 * S
LB_KG = 0.45359237
PSI_PA = LB_KG * 9.80665 / 0.0254**2

# Tag -> (role, unit conversion to SI) of the test plant's boiler-a.
TO_SI = {
    "GAS": ("fuel_volume_flow", lambda x: x / 3600.0),  # Nm3/h -> m3/s
    "FW-FLOW": ("feedwater_flow", lambda x: x * 1000.0 / 3600.0),  # t/h -> kg/s
    "FW-P": ("feedwater_pressure", lambda x: x * 1e5 + ATMOSPHERE_PA),  # barg -> Pa
    "FW-T": ("feedwater_temperature", lambda x: x + 273.15),  # degC -> K
    "MS-FLOW": ("steam_flow", lambda x: x * 1000.0 * LB_KG / 3600.0),  # klb/h -> kg/s
    "MS-P": ("steam_pressure", lambda x: x * PSI_PA + ATMOSPHERE_PA),  # psig -> Pa
    "MS-T": ("steam_temperature", lambda x: (x - 32.0) / 1.8 + 273.15),  # degF -> K
}
# A plausible operating point inside the tags' bounds (invented numbers).
BASE = {
    "GAS": 4300.0,
    "FW-FLOW": 60.0,
    "FW-P": 95.0,
    "FW-T": 215.0,
    "MS-FLOW": 132.0,
    "MS-P": 1200.0,
    "MS-T": 950.0,
}
# The test plant's fuel "gas" and dead state, as the plant file states them.
GAS = FuelProperties("gas", hhv_j_per_kg=50e6, lhv_j_per_kg=45e6, density_kg_per_m3=0.8)
DEAD = dead_state(298.15, 101_325.0)


def readings(minutes: int, step_s: int = 10, seed: int = 1) -> dict[str, np.ndarray]:
    """Per tag, values every ``step_s`` from T0 for ``minutes``, wobbling around BASE."""
    rng = np.random.default_rng(seed)
    n = minutes * 60 // step_s
    return {tag: base * (1 + 0.01 * rng.standard_normal(n)) for tag, base in BASE.items()}


def push(client, headers, values: dict[str, np.ndarray], step_s: int = 10, t0: int = T0):
    n = len(next(iter(values.values())))
    body = {
        "plant": "test-works",
        "times": [t0 + i * step_s * S for i in range(n)],
        "series": {tag: v.tolist() for tag, v in values.items()},
    }
    response = client.post("/api/v1/readings/columnar", json=body, headers=headers)
    assert response.status_code == 200, response.text
    return response.json()


def stored_results(session_factory, unit_slug: str = "boiler-a") -> pd.DataFrame:
    with session_factory() as s:
        unit_id = s.scalar(select(Unit.id).where(Unit.slug == unit_slug))
        rows = s.execute(
            select(ResultValue.metric, ResultValue.t_ms, ResultValue.value).where(
                ResultValue.unit_id == unit_id
            )
        ).all()
    frame = pd.DataFrame(rows, columns=["metric", "t_ms", "value"])
    return frame.pivot(index="t_ms", columns="metric", values="value").sort_index()


def expected_from_engine(values: dict[str, np.ndarray], minutes: int, step_s: int = 10):
    """Plain per-minute means of the SI readings (regular sampling: equal to the
    time-weighted mean) fed straight into the boiler model."""
    per_minute = 60 // step_s
    inputs = pd.DataFrame(
        {
            role: convert(values[tag]).reshape(minutes, per_minute).mean(axis=1)
            for tag, (role, convert) in TO_SI.items()
        },
        index=pd.Index(T0 + MIN * np.arange(minutes), name="t_ms"),
    )
    return BOILER.model(
        inputs,
        BOILER.resolve_parameters({"mass_balance_tolerance": 0.03}),
        ModelContext(dead=DEAD, fuel=GAS),
    )


@pytest.fixture
def ingest(make_key) -> dict:
    return make_key("ingest")


def test_boiler_results_equal_the_engine_on_the_same_averages(
    client, plant, ingest, session_factory
) -> None:
    values = readings(5)
    report = push(client, ingest, values)
    assert report["units_marked_dirty"] == ["boiler-a"]
    assert run_once(session_factory, "w1") == 1

    got = stored_results(session_factory)
    want = expected_from_engine(values, 5)
    # Five whole minutes; the last reading (00:04:50) holds for the 10 s spacing only,
    # so 00:05 has no coverage and no results.
    assert list(got.index) == list(want.index)
    for column in BOILER.results:
        np.testing.assert_allclose(
            got[column.name].to_numpy(float),
            want[column.name].to_numpy(float),
            rtol=1e-9,
            err_msg=column.name,
        )
    np.testing.assert_array_equal(got["flags"].to_numpy(), want["flags"].to_numpy())
    np.testing.assert_array_equal(got["coverage"].to_numpy(), np.ones(5))
    assert 0.5 < got["eta_1"].iloc[0] < 1.0  # a sane boiler, not a vacuous comparison
    with session_factory() as s:
        meta = s.scalars(select(ResultMeta)).one()
        assert (meta.kind, meta.formulation) == ("boiler", "IAPWS-IF97")
        span = s.scalars(select(WorkSpan)).one()
        # The span grew by one interval (a reading holds into the next one) and is done.
        assert (span.state, span.start_ms, span.end_ms) == ("done", T0 + 6 * MIN, T0 + 6 * MIN)


def test_reingesting_identical_readings_does_not_recompute(
    client, plant, ingest, session_factory
) -> None:
    values = readings(3)
    push(client, ingest, values)
    assert run_once(session_factory, "w1") == 1
    before = stored_results(session_factory)
    report = push(client, ingest, values)
    assert (report["stored"], report["replaced"], report["units_marked_dirty"]) == (0, 0, [])
    with session_factory() as s:
        assert not queue.has_work(s)
    assert run_once(session_factory, "w1") == 0
    pd.testing.assert_frame_equal(stored_results(session_factory), before)


def test_thin_interval_is_flagged_and_not_computed(client, plant, ingest, session_factory) -> None:
    values = readings(2)
    # Minute 1: FW-T sends only its first 20 s (two readings held 10 s each: coverage
    # 20/60 < 0.5). Its readings are dropped from the push, the others are complete.
    values_fw_t = values.pop("FW-T")
    push(client, ingest, values)
    push(client, ingest, {"FW-T": values_fw_t[:8]})
    run_once(session_factory, "w1")
    got = stored_results(session_factory)
    assert list(got.index) == [T0, T0 + MIN]
    assert got.loc[T0, "flags"] == 0
    assert int(got.loc[T0 + MIN, "flags"]) == DataFlag.THIN_DATA | Flag.INPUT_OUT_OF_RANGE
    assert got.loc[T0 + MIN, "coverage"] == pytest.approx(20 / 60)
    assert np.isnan(got.loc[T0 + MIN, "eta_1"])  # stored as NULL, read back as NaN
    assert got.loc[T0, "eta_1"] > 0.5


def test_results_of_intervals_without_inputs_are_removed(
    client, plant, ingest, session_factory
) -> None:
    values = readings(4)
    push(client, ingest, values)
    run_once(session_factory, "w1")
    assert len(stored_results(session_factory)) == 4
    # The readings of minutes 2 and 3 are deleted (as an admin clean-up would) and the
    # range queued again: their results must go, not linger.
    from api.readings.models import Reading

    with session_factory() as s:
        s.execute(Reading.__table__.delete().where(Reading.t_ms >= T0 + 2 * MIN))
        unit_id = s.scalar(select(Unit.id))
        mark_units_dirty(session=s, spans=[(unit_id, T0, T0 + 4 * MIN)], reason="recompute")
        s.commit()
    run_once(session_factory, "w1")
    assert list(stored_results(session_factory).index) == [T0, T0 + MIN]


def test_long_span_is_computed_in_chunks(client, plant, ingest, session_factory) -> None:
    values = readings(6, step_s=60)
    push(client, ingest, values, step_s=60)
    chunks: list[tuple[int, int]] = []
    done = run_once(
        session_factory,
        "w1",
        options=Options(chunk_seconds=120),
        after_chunk=lambda claim, lo, hi: chunks.append((lo - T0, hi - T0)),
    )
    assert done == 1
    # Six minutes plus the one-interval hold, in two-minute chunks.
    assert chunks == [(0, 2 * MIN), (2 * MIN, 4 * MIN), (4 * MIN, 6 * MIN), (6 * MIN, 7 * MIN)]
    got = stored_results(session_factory)
    want = expected_from_engine(values, 6, step_s=60)
    np.testing.assert_allclose(
        got["eta_2"].to_numpy(float), want["eta_2"].to_numpy(float), rtol=1e-9
    )
    # Readings once a minute fill their minute: the last one too (spacing 60 s).
    assert list(got.index) == list(want.index)


def test_overlapping_spans_are_merged_into_one_claim(client, plant, session_factory) -> None:
    with session_factory() as s:
        unit_id = s.scalar(select(Unit.id))
        mark_units_dirty(
            session=s,
            spans=[
                (unit_id, T0, T0 + 2 * MIN),
                (unit_id, T0 + MIN, T0 + 3 * MIN),
                (unit_id, T0 + 3 * MIN, T0 + 4 * MIN),
                (unit_id, T0 + 9 * MIN, T0 + 10 * MIN),
            ],
            reason="ingest",
        )
        s.commit()
        claim = queue.claim_next(s, "w1")
        assert claim is not None
        # The first three touch or overlap: one claim [0, 4 min) + one interval of hold.
        assert (claim.start_ms - T0, claim.end_ms - T0) == (0, 5 * MIN)
        rows = s.execute(
            select(WorkSpan.start_ms, WorkSpan.state).order_by(WorkSpan.start_ms)
        ).all()
        assert [(r.start_ms - T0, r.state) for r in rows] == [(0, "leased"), (9 * MIN, "pending")]
        # While the unit holds a live lease, its other span is not handed out.
        assert queue.claim_next(s, "w2") is None


class Crash(BaseException):
    """Stands for the process dying: not an Exception, so nothing in the worker catches it."""


def test_worker_dying_inside_the_transaction_loses_and_duplicates_nothing(
    client, plant, ingest, session_factory, monkeypatch
) -> None:
    values = readings(6, step_s=60)
    push(client, ingest, values, step_s=60)
    real = worker.replace_results
    calls = []

    def dies_on_second_chunk(session, unit_id, start, end, frame, **kwargs):
        calls.append(start)
        written = real(session, unit_id, start, end, frame, **kwargs)
        if len(calls) == 2:
            raise Crash  # after writing rows, before the commit
        return written

    monkeypatch.setattr(worker, "replace_results", dies_on_second_chunk)
    options = Options(chunk_seconds=120, lease_seconds=60)
    with pytest.raises(Crash):
        run_once(session_factory, "w1", options=options)
    with session_factory() as s:
        span = s.scalars(select(WorkSpan)).one()
        # First chunk committed (span advanced past it), second rolled back; the lease
        # is still w1's and has not expired, so nobody may take it yet.
        assert (span.state, span.start_ms - T0, span.lease_owner) == ("leased", 2 * MIN, "w1")
        assert queue.claim_next(s, "w2") is None
    assert sorted(stored_results(session_factory).index - T0) == [0, MIN]

    monkeypatch.setattr(worker, "replace_results", real)
    later = dt.datetime.now(dt.UTC) + dt.timedelta(seconds=61)
    assert (
        run_once(session_factory, "w2", options=Options(chunk_seconds=120, clock=lambda: later))
        == 1
    )
    got = stored_results(session_factory)
    want = expected_from_engine(values, 6, step_s=60)
    assert list(got.index) == list(want.index)
    np.testing.assert_allclose(
        got["eta_1"].to_numpy(float), want["eta_1"].to_numpy(float), rtol=1e-9
    )
    with session_factory() as s:
        # The kind's results, flags, coverage, and u_, u_random_, u95_ of the four banded
        # results this boiler produces (eta_1, eta_1_lhv, eta_2, sgen_w_per_k; no flue-gas
        # roles bound, so no indirect efficiency): api.uncertainty.metrics.
        n_metrics = len(BOILER.results) + 2 + 3 * 4
        own = ResultValue.metric.not_in(registered_metrics("boiler"))  # not later stages'
        assert s.scalar(select(func.count()).select_from(ResultValue).where(own)) == 6 * n_metrics
        assert s.scalar(select(WorkSpan.state)) == SpanState.DONE.value


def test_a_worker_whose_lease_was_taken_over_writes_nothing(
    client, plant, ingest, session_factory
) -> None:
    push(client, ingest, readings(2, step_s=60), step_s=60)
    now = dt.datetime.now(dt.UTC)
    with session_factory() as s:
        stale = queue.claim_next(s, "slow", lease_seconds=1, clock=lambda: now)
    with session_factory() as s:
        fresh = queue.claim_next(s, "fast", clock=lambda: now + dt.timedelta(seconds=2))
    assert stale is not None and fresh is not None and fresh.span_id == stale.span_id
    assert worker.process_claim(session_factory, stale, Options()) is False
    assert stored_results(session_factory).empty
    assert worker.process_claim(session_factory, fresh, Options()) is True
    assert len(stored_results(session_factory)) == 2


def test_a_failing_model_backs_off_then_marks_the_span_failed(
    client, plant, ingest, session_factory, monkeypatch
) -> None:
    push(client, ingest, readings(1, step_s=60), step_s=60)

    def broken(*args, **kwargs):
        raise ValueError("fuel 'gas' has no density_kg_per_m3")

    monkeypatch.setattr(worker, "compute_range", broken)
    clock = [dt.datetime.now(dt.UTC)]
    options = Options(clock=lambda: clock[0])
    for attempt in range(1, queue.MAX_ATTEMPTS + 1):
        assert run_once(session_factory, "w1", options=options) == 0
        with session_factory() as s:
            span = s.scalars(select(WorkSpan)).one()
        assert span.attempts == attempt
        assert span.last_error == "ValueError: fuel 'gas' has no density_kg_per_m3"
        assert span.state == ("failed" if attempt == queue.MAX_ATTEMPTS else "pending")
        # Not claimable again before its back-off has passed.
        assert run_once(session_factory, "w1", options=options) == 0
        clock[0] += dt.timedelta(seconds=queue.RETRY_BASE_SECONDS * 2**attempt + 1)
    assert span.state == "failed"


def test_ambient_tag_gives_t0_per_interval(client, admin, ingest, session_factory) -> None:
    doc = plant_document()
    doc["plant"]["dead_state"] = {"ambient_tag": "AMB", "pressure": "101.325 kPa"}
    doc["tags"]["AMB"] = {"unit": "degC", "low": -40, "high": 50}
    response = client.post("/api/v1/plants", json=doc, headers=admin)
    assert response.status_code == 200, response.text
    values = readings(2, step_s=60)
    push(client, ingest, values, step_s=60)
    # Ambient only for the first minute: 10 degC. The second minute falls back to the
    # plant's T0 (25 degC, the default of the plant file) with AMBIENT_DEFAULT.
    push(client, ingest, {"AMB": np.array([10.0])}, step_s=60)
    run_once(session_factory, "w1")
    got = stored_results(session_factory)

    per_minute = {role: convert(values[tag]) for tag, (role, convert) in TO_SI.items()}
    inputs = pd.DataFrame(per_minute, index=pd.Index(T0 + MIN * np.arange(2), name="t_ms"))
    dead = dead_state(np.array([283.15, 298.15]), np.full(2, 101_325.0))
    want = BOILER.model(
        inputs,
        BOILER.resolve_parameters({"mass_balance_tolerance": 0.03}),
        ModelContext(dead=dead, fuel=GAS),
    )
    np.testing.assert_allclose(
        got["eta_2"].to_numpy(float), want["eta_2"].to_numpy(float), rtol=1e-9
    )
    np.testing.assert_allclose(
        got["lost_work_w"].to_numpy(float), want["lost_work_w"].to_numpy(float), rtol=1e-9
    )
    assert got["flags"].tolist() == [
        float(want["flags"].iloc[0]),
        float(want["flags"].iloc[1] | DataFlag.AMBIENT_DEFAULT),
    ]
    # T0 matters: the same minute at 25 degC gives a different second-law result.
    assert got["eta_2"].iloc[0] != pytest.approx(
        expected_from_engine(values, 2, step_s=60)["eta_2"].iloc[0], rel=1e-6
    )


def test_hooks_write_in_the_chunk_transaction_and_other_stages_metrics_survive(
    client, plant, ingest, session_factory
) -> None:
    from api.results import metrics as metric_registry
    from api.results.store import replace_results
    from engine.catalogue import ResultColumn

    def provider(kind: str):
        return [ResultColumn("probe_eta_1", "1", "A probe of eta_1 (a later stage)")]

    calls: list[tuple[int, int, int]] = []

    def stage(session, unit_id, start, end):
        calls.append((unit_id, start - T0, end - T0))
        # The stage sees the chunk's results, not yet committed, in the same transaction.
        t = np.array(
            session.scalars(
                select(ResultValue.t_ms).where(
                    ResultValue.unit_id == unit_id,
                    ResultValue.metric == "eta_1",
                    ResultValue.t_ms >= start,
                    ResultValue.t_ms < end,
                )
            ).all(),
            dtype=np.int64,
        )
        frame = pd.DataFrame({"probe_eta_1": np.full(len(t), 0.9)}, index=pd.Index(t, name="t_ms"))
        replace_results(session, unit_id, start, end, frame, only=["probe_eta_1"])

    def broken(session, unit_id, start, end):
        raise RuntimeError("rule evaluation failed")

    metric_registry.register_metric_provider(provider)
    worker.register_after_compute(stage)
    try:
        push(client, ingest, readings(3, step_s=60), step_s=60)
        assert run_once(session_factory, "w1") == 1
        assert [c[1:] for c in calls] == [(0, 4 * MIN)]
        got = stored_results(session_factory)
        assert got["probe_eta_1"].tolist() == [0.9, 0.9, 0.9]
        worker.unregister_after_compute(stage)

        # A recompute by the pipeline alone keeps the other stage's metric.
        with session_factory() as s:
            unit_id = s.scalar(select(Unit.id))
            mark_units_dirty(session=s, spans=[(unit_id, T0, T0 + 3 * MIN)], reason="recompute")
            s.commit()
        assert run_once(session_factory, "w1") == 1
        assert stored_results(session_factory)["probe_eta_1"].tolist() == [0.9, 0.9, 0.9]

        # A failing hook fails the chunk: nothing of it is committed.
        worker.register_after_compute(broken)
        with session_factory() as s:
            s.execute(ResultValue.__table__.delete())
            mark_units_dirty(session=s, spans=[(unit_id, T0, T0 + 3 * MIN)], reason="recompute")
            s.commit()
        assert run_once(session_factory, "w1") == 0
        assert stored_results(session_factory).empty
        with session_factory() as s:
            failed = s.scalars(select(WorkSpan).where(WorkSpan.state == "pending")).one()
        assert failed.last_error == "RuntimeError: rule evaluation failed"
    finally:
        worker.unregister_after_compute(stage)
        worker.unregister_after_compute(broken)
        metric_registry._providers.remove(provider)
