"""Baselines through the pipeline, on SQLite and PostgreSQL: readings -> worker -> results;
fit and activate; the activation's recompute and later live readings write expected
values, drift and control charts that equal the engine's charts run in one pass over the
same data, CUSUM alarms where the engine puts them (and the alert rules that read them
fire), NaN expected values with the flag outside the fit range, and a recomputed earlier
range charted again from its checkpoint.

The unit is a fictional heat engine (invented numbers): 30 +/- 1 kW of work at about
100 kW of heat, eta_1 = 0.30 + 0.01 per kW above 30 kW, with 0.3 % scatter.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sqlalchemy import select

from api.alerts.models import Alert
from api.baselines.models import ChartCheckpoint, DriftEvent
from api.pipeline.models import SpanState, WorkSpan
from api.pipeline.worker import Options, run_once
from api.plants.models import Unit
from api.readings.dirty import mark_units_dirty
from api.results.models import ResultValue
from engine.baseline import fit_baseline, predict
from engine.drift import cusum, decision_interval_for_arl0, ewma
from engine.steady import SteadyLimit, steady_state
from tests.api.factories import T0, plant_document

MIN = 60_000
URL = "/api/v1/units/engine-1"
N_REF = 120
"""Reference period: the first two hours."""
N_FIRST = 150
"""Minutes pushed before the baseline exists; the rest arrive afterwards, live."""
STEP = 180
"""From this minute on the engine needs 3 % more heat for the same work."""
HIGH = 240
"""From this minute on it runs at 40 kW: outside the reference range."""
N = 260

# The heat-engine kind's steady-state limits as api/baselines/kinds.py documents them
# (our choice, common practice): work and heat input within 5 % of their means over
# 15 one-minute intervals, work positive.
ENGINE_STEADY = [
    SteadyLimit("work_output_w", max_range=0.05, relative=True),
    SteadyLimit("heat_input_w", max_range=0.05, relative=True),
]
# CUSUM k = 0.5 and h for one false alarm a year of 60 s intervals (the service default).
K, H = 0.5, decision_interval_for_arl0(525_600.0, 0.5)


def engine_plant() -> dict:
    return plant_document(
        tags={"HE-Q": {"unit": "kW"}, "HE-TH": {"unit": "degC"}, "HE-W": {"unit": "kW"}},
        units={
            "engine-1": {
                "name": "Engine 1",
                "kind": "heat_engine",
                "inputs": {
                    "heat_input": "HE-Q",
                    "hot_temperature": "HE-TH",
                    "work_output": "HE-W",
                },
            }
        },
        rules={
            "engine-1-cusum": {
                "unit": "engine-1",
                "kind": "cusum",
                "metric": "eta_1",
                "side": "lower",
            },
            "engine-1-drift": {
                "unit": "engine-1",
                "kind": "drift",
                "metric": "eta_1",
                "below": "-2 %",
            },
        },
    )


def readings() -> dict[str, np.ndarray]:
    """Per tag (kW, degC), one reading per minute for N minutes."""
    i = np.arange(N)
    rng = np.random.default_rng(11)
    # After the reference period the swing is a little smaller: every later interval
    # below 40 kW lies strictly inside the fit range.
    work = 30.0 + np.where(i < N_REF, 1.0, 0.9) * np.sin(2 * np.pi * i / 120.0)
    work[HIGH:] = 40.0
    eta = (0.30 + 0.01 * (work - 30.0)) * (1 + 0.003 * rng.standard_normal(N))
    heat = work / eta
    heat[STEP:] *= 1.03
    return {"HE-Q": heat, "HE-TH": np.full(N, 500.0), "HE-W": work}


def push(client, headers, values: dict[str, np.ndarray], lo: int, hi: int) -> None:
    body = {
        "plant": "test-works",
        "times": [T0 + i * MIN for i in range(lo, hi)],
        "series": {tag: v[lo:hi].tolist() for tag, v in values.items()},
    }
    response = client.post("/api/v1/readings/columnar", json=body, headers=headers)
    assert response.status_code == 200, response.text


def stored(session_factory, unit_id: int) -> pd.DataFrame:
    with session_factory() as s:
        rows = s.execute(
            select(ResultValue.metric, ResultValue.t_ms, ResultValue.value).where(
                ResultValue.unit_id == unit_id
            )
        ).all()
    frame = pd.DataFrame(rows, columns=["metric", "t_ms", "value"])
    return frame.pivot(index="t_ms", columns="metric", values="value").sort_index().astype(float)


def iso(t_ms: int) -> str:
    return pd.Timestamp(t_ms, unit="ms", tz="UTC").strftime("%Y-%m-%dT%H:%M:%SZ")


def engine_charts(results: pd.DataFrame):
    """What the stage must have written, computed here in one pass with the engine."""
    steady = steady_state(results, ENGINE_STEADY, 15) & (results["work_output_w"] > 0)
    observe = steady & (results["flags"] == 0)
    ref = results.index < T0 + N_REF * MIN
    model = fit_baseline(
        results["eta_1"],
        results[["work_output_w"]],
        load="work_output_w",
        mask=(observe & ref).to_numpy(),
    )
    prediction = predict(model, results[["work_output_w"]])
    z = ((results["eta_1"] - prediction["expected"]) / model.residual_std).where(observe)
    ewma_frame, _ = ewma(z)
    return model, prediction, ewma_frame, cusum(z, K, H)


@pytest.fixture
def ingest(make_key) -> dict:
    return make_key("ingest")


@pytest.fixture
def read(make_key) -> dict:
    return make_key("read")


def test_activation_recompute_and_live_chunks_chart_as_the_engine_does(
    client, admin, ingest, read, session_factory
) -> None:
    assert client.post("/api/v1/plants", json=engine_plant(), headers=admin).status_code == 200
    with session_factory() as s:
        unit_id = s.scalar(select(Unit.id).where(Unit.slug == "engine-1"))
    values = readings()
    push(client, ingest, values, 0, N_FIRST)
    assert run_once(session_factory) == 1

    created = client.post(
        f"{URL}/baselines",
        json={"metric": "eta_1", "start": iso(T0), "end": iso(T0 + N_REF * MIN)},
        headers=admin,
    )
    assert created.status_code == 201, created.text
    assert created.json()["model"] == "linear" and created.json()["load"] == "work_output_w"
    activated = client.post(f"{URL}/baselines/1/activate", headers=admin)
    assert activated.status_code == 200, activated.text
    # The recompute: from the reference period's start to after the last reading.
    assert activated.json()["recompute"] == {
        "start": iso(T0),
        "end": iso(T0 + N_FIRST * MIN),
        "intervals": N_FIRST,
    }
    with session_factory() as s:
        spans = s.execute(
            select(WorkSpan.start_ms, WorkSpan.end_ms, WorkSpan.reason).where(
                WorkSpan.state == SpanState.PENDING.value
            )
        ).all()
    assert [(a - T0, b - T0, r) for a, b, r in spans] == [(0, N_FIRST * MIN, "baseline")]

    # The recompute in one-hour chunks, then the rest of the day arriving live.
    assert run_once(session_factory, options=Options(chunk_seconds=3600)) == 1
    push(client, ingest, values, N_FIRST, N)
    assert run_once(session_factory, options=Options(chunk_seconds=3600)) == 1

    got = stored(session_factory, unit_id)
    assert len(got) == N and (got["flags"] == 0).all()
    model, prediction, ewma_frame, charts = engine_charts(got)
    inside = got.index < T0 + HIGH * MIN
    np.testing.assert_allclose(
        got["expected_eta_1"][inside], prediction["expected"][inside], rtol=1e-12
    )
    np.testing.assert_allclose(
        got["drift_eta_1"][inside], (got["eta_1"] - prediction["expected"])[inside], rtol=1e-9
    )
    np.testing.assert_allclose(got["expected_lower_eta_1"], prediction["expected_lower"])
    # Outside the fit range: flagged, and no expected value, drift or chart input.
    assert got["extrapolated_eta_1"].tolist() == [0.0] * HIGH + [1.0] * (N - HIGH)
    assert got["expected_eta_1"][~inside].isna().all()
    assert got["drift_rel_eta_1"][~inside].isna().all()
    # The charts, computed chunk by chunk with carried state, equal one pass.
    for column, want in (
        ("cusum_lower_eta_1", charts.frame["cusum_lower"]),
        ("cusum_upper_eta_1", charts.frame["cusum_upper"]),
        ("ewma_eta_1", ewma_frame["ewma"]),
    ):
        np.testing.assert_allclose(got[column], want, rtol=1e-9, atol=1e-12, err_msg=column)
    want_alarm = np.where(
        charts.frame["cusum_alarm_upper"],
        1.0,
        np.where(charts.frame["cusum_alarm_lower"], -1.0, 0.0),
    )
    assert got["cusum_alarm_eta_1"].tolist() == want_alarm.tolist()
    lower = charts.events[charts.events["side"] == "lower"]
    assert len(lower) >= 1
    first = lower.iloc[0]
    # The step at minute 180 (-2.9 % in eta_1, about 9 residual standard deviations) is
    # caught within a few intervals, and the run that alarmed began at the step.
    assert first["shift_start"] == T0 + STEP * MIN
    assert T0 + STEP * MIN <= first["alarm_at"] <= T0 + (STEP + 3) * MIN
    assert (got["cusum_alarm_eta_1"].iloc[:STEP] == 0).all()
    with session_factory() as s:
        events = s.execute(
            select(DriftEvent.alarm_ms, DriftEvent.side, DriftEvent.shift_start_ms).order_by(
                DriftEvent.alarm_ms
            )
        ).all()
        alerts = {a.rule_name: a for a in s.scalars(select(Alert))}
    assert [tuple(e) for e in events] == [
        (int(e.alarm_at), e.side, int(e.shift_start)) for e in charts.events.itertuples()
    ]
    # The alert rules read what the stage wrote, in the same chunk transaction.
    assert alerts["engine-1-cusum"].began_at.timestamp() * 1000 == first["alarm_at"]
    drift_began = alerts["engine-1-drift"].began_at.timestamp() * 1000
    assert drift_began == T0 + STEP * MIN
    assert alerts["engine-1-drift"].expected == pytest.approx(
        prediction["expected"].iloc[STEP], rel=1e-12
    )

    summary = client.get(f"{URL}/drift/summary", params={"start": iso(T0)}, headers=read).json()
    assert summary["cost_metric"] is None and summary["totals"]["cost"] is None
    state = summary["metrics"][0]
    assert state["last_alarm"]["side"] == "lower"
    assert state["alarms"] == len(charts.events)
    assert state["last_alarm"]["at"] == iso(int(charts.events["alarm_at"].iloc[-1]))
    assert state["current"]["t"] == iso(T0 + (HIGH - 1) * MIN)
    # Reset after every alarm, the chart alarms again and again while the shift lasts;
    # the series leads back to where the shift began.
    assert state["episode"] == {
        "side": "lower",
        "shift_start": iso(T0 + STEP * MIN),
        "first_alarm": iso(int(first["alarm_at"])),
        "alarms": len(lower),
        "complete": True,
    }
    assert len(lower) > 5

    # A recompute of an earlier range continues from the checkpoint before it (replaying
    # the stored drift in between) and charts that range exactly as before.
    with session_factory() as s:
        mark_units_dirty(
            session=s, spans=[(unit_id, T0 + 100 * MIN, T0 + 130 * MIN)], reason="recompute"
        )
        s.commit()
    assert run_once(session_factory) == 1
    again = stored(session_factory, unit_id)
    for column in ("cusum_lower_eta_1", "ewma_eta_1", "expected_eta_1", "steady"):
        np.testing.assert_allclose(
            again[column], got[column], rtol=1e-9, atol=1e-12, err_msg=column
        )
    with session_factory() as s:
        kept = s.scalars(select(ChartCheckpoint.t_ms).order_by(ChartCheckpoint.t_ms)).all()
    assert kept[0] == T0  # the origin is never pruned
