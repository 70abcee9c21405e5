"""Drift significance through the pipeline, on SQLite and PostgreSQL: a drift from the
baseline counts only beyond the combined uncertainty of actual and expected, and a
threshold rule on ``drift_rel_significant_<M>`` alerts on significant drift only.

Constructed case (invented numbers): a fictional heat engine, 30 +/- 1 kW of work at
about 100 kW of heat, eta_1 = 0.30 + 0.01 per kW above 30 kW with 0.1 % scatter, one
reading a minute. Its work meter states a random component of 0.5 % of reading, so the
random uncertainty of eta_1 = W / Q is 0.5 % of eta_1 (relative uncertainties of a
quotient add in quadrature, JCGM 100:2008 5.1.6). The baseline is fitted on the first
two hours; then the engine needs 0.6 % more heat (drift about -0.0018, inside
2 sqrt(u_random^2 + u_expected^2), about 0.0031) and later 3 % more (about -0.0087,
far beyond). Significance by GUM Eq. (10) with k = 2, written out in the test.
"""

from __future__ import annotations

import numpy as np
import pytest
from sqlalchemy import select

from api.alerts.models import Alert
from api.baselines.models import Baseline
from api.pipeline.worker import Options, run_once
from api.plants.models import Unit
from engine import baseline as engine_baseline
from tests.api.factories import T0, plant_document
from tests.api.test_baselines_pipeline import iso, push, stored

MIN = 60_000
URL = "/api/v1/units/engine-1"
N_REF, N_FIRST, SMALL, LARGE, N = 120, 140, 150, 200, 240


def engine_plant() -> dict:
    return plant_document(
        tags={
            "HE-Q": {"unit": "kW", "uncertainty": "0.5% of reading"},
            "HE-TH": {"unit": "degC", "uncertainty": 1.0},
            "HE-W": {
                "unit": "kW",
                "uncertainty": [
                    {"value": "0.3% of reading"},
                    {"value": "0.5% of reading", "component": "random"},
                ],
            },
        },
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
            "engine-1-drift": {
                "unit": "engine-1",
                "kind": "drift",
                "metric": "eta_1",
                "below": "-0.5 %",
            },
            "engine-1-significant-drift": {
                "unit": "engine-1",
                "kind": "threshold",
                "metric": "drift_rel_significant_eta_1",
                "below": "-0.5 %",
            },
        },
    )


def readings() -> dict[str, np.ndarray]:
    i = np.arange(N)
    rng = np.random.default_rng(17)
    work = 30.0 + np.where(i < N_REF, 1.0, 0.9) * np.sin(2 * np.pi * i / 120.0)
    eta = (0.30 + 0.01 * (work - 30.0)) * (1 + 0.001 * rng.standard_normal(N))
    heat = work / eta
    heat[SMALL:LARGE] *= 1.006
    heat[LARGE:] *= 1.03
    return {"HE-Q": heat, "HE-TH": np.full(N, 500.0), "HE-W": work}


def test_drift_is_significant_only_beyond_the_combined_uncertainty(
    client, admin, make_key, session_factory
) -> None:
    ingest = make_key("ingest")
    assert client.post("/api/v1/plants", json=engine_plant(), headers=admin).status_code == 200
    values = readings()
    push(client, ingest, values, 0, N_FIRST)
    assert run_once(session_factory) == 1
    created = client.post(
        f"{URL}/baselines",
        json={"metric": "eta_1", "start": iso(T0), "end": iso(T0 + N_REF * MIN)},
        headers=admin,
    )
    assert created.status_code == 201, created.text
    assert client.post(f"{URL}/baselines/1/activate", headers=admin).status_code == 200
    assert run_once(session_factory, options=Options(chunk_seconds=3600)) == 1
    push(client, ingest, values, N_FIRST, N)
    assert run_once(session_factory, options=Options(chunk_seconds=3600)) == 1

    with session_factory() as s:
        unit_id = s.scalar(select(Unit.id).where(Unit.slug == "engine-1"))
        model = s.scalars(select(Baseline)).one().model
        # The first alert of each rule (the plain rule fires again as the small drift
        # wanders across its limit).
        alerts = {}
        for alert in s.scalars(select(Alert).order_by(Alert.began_at.desc())):
            alerts[alert.rule_name] = alert
    got = stored(session_factory, unit_id)
    t_quantile = engine_baseline.Baseline.from_dict(model).t_quantile

    # The work meter's stated random component, alone in the random part (one reading a
    # minute: no scatter to estimate): 0.5 % of eta_1.
    np.testing.assert_allclose(got["u_random_eta_1"], 0.005 * got["eta_1"], rtol=1e-6)
    # GUM Eq. (10), k = 2: the expected value's standard uncertainty is its prediction
    # band's half-width over the band's t quantile; the actual's is its random part only
    # (the baseline was fitted on the same instruments).
    u_expected = (got["expected_upper_eta_1"] - got["expected_eta_1"]) / t_quantile
    limit = 2 * np.hypot(got["u_random_eta_1"], u_expected)
    beyond = (got["drift_eta_1"].abs() > limit).astype(float)
    known = got["expected_eta_1"].notna()
    assert known.sum() == N
    np.testing.assert_array_equal(got["drift_significant_eta_1"], beyond)

    i = np.arange(N)
    small, large = (i >= SMALL) & (i < LARGE), i >= LARGE
    assert got["drift_rel_eta_1"][small].mean() < -0.005  # a real, small drift ...
    assert (got["drift_significant_eta_1"][small] == 0).all()  # ... within the band
    assert (got["drift_significant_eta_1"][large] == 1).all()
    assert (got["drift_significant_eta_1"][i < SMALL] == 0).all()
    np.testing.assert_allclose(
        got["drift_rel_significant_eta_1"],
        np.where(beyond == 1, got["drift_rel_eta_1"], 0.0),
        rtol=1e-12,
    )
    # The plain drift rule fires on the small drift; the rule on significant drift only
    # once the drift exceeds the combined uncertainty.
    assert alerts["engine-1-drift"].began_at.timestamp() * 1000 == T0 + SMALL * MIN
    with session_factory() as s:
        fired = s.scalars(select(Alert.rule_name)).all()
    assert fired.count("engine-1-significant-drift") == 1
    significant = alerts["engine-1-significant-drift"]
    assert significant.began_at.timestamp() * 1000 == T0 + LARGE * MIN
    assert significant.value == pytest.approx(got["drift_rel_eta_1"].iloc[LARGE], rel=1e-12)
