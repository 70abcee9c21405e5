"""Baselines through the API on SQLite and PostgreSQL, on results written directly with
the results service (no unit model involved): the fit equals the engine's on the same
intervals, versions and the single active one, comparison and cost of drift against hand
calculations, and the problem details.

The plant is fictional ("Test Works", one block burning a gas of invented properties).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from sqlalchemy import select, update
from sqlalchemy.exc import IntegrityError

from api.baselines.models import Baseline
from api.baselines.stage import apply_baselines
from api.plants.models import Unit
from api.results.store import upsert_results
from engine.baseline import fit_baseline
from engine.steady import SteadyLimit, steady_state
from tests.api.factories import T0, plant_document

MIN = 60_000
URL = "/api/v1/units/block-1"

# The fictional block's fuel: 56 kg CO2 per GJ (HHV) and 10 EUR per GJ (invented numbers).
CO2_KG_PER_GJ = 56.0
PRICE_EUR_PER_GJ = 10.0

# The block kind's steady-state limits as api/baselines/kinds.py documents them (our
# choice, common practice): over 15 one-minute intervals, net power within 3 % and fuel
# input within 5 % of their means, net power positive.
BLOCK_STEADY = [
    SteadyLimit("net_power_w", max_range=0.03, relative=True),
    SteadyLimit("fuel_heat_input_hhv_w", max_range=0.05, relative=True),
]
WINDOW = 15


def block_plant(ambient: bool = False) -> dict:
    dead_state = {"temperature": "25 degC", "pressure": "101.325 kPa"}
    if ambient:
        dead_state["ambient_tag"] = "AMB"
    doc = plant_document(
        fuels={
            "gas": {
                "heating_value": {
                    "hhv": "50 MJ/kg",
                    "lhv": "45 MJ/kg",
                    "co2": f"{CO2_KG_PER_GJ} kg/GJ",
                }
            }
        },
        tags={
            "BL-P": {"unit": "MW"},
            "BL-FUEL": {"unit": "kg/s"},
            "AMB": {"unit": "degC"},
        },
        units={
            "block-1": {
                "name": "Block 1",
                "kind": "block",
                "fuel": "gas",
                "inputs": {"gross_power": "BL-P", "fuel_mass_flow": "BL-FUEL"},
            }
        },
    )
    doc["plant"] = {**doc["plant"], "dead_state": dead_state}
    doc["plant"]["fuel_price"] = {"amount": PRICE_EUR_PER_GJ, "currency": "EUR", "per": "GJ"}
    return doc


@pytest.fixture
def read(make_key) -> dict:
    return make_key("read")


def apply(client, admin, doc) -> int:
    response = client.post("/api/v1/plants", json=doc, headers=admin)
    assert response.status_code == 200, response.text
    return 0


@pytest.fixture
def unit_id(client, admin, session_factory) -> int:
    apply(client, admin, block_plant())
    with session_factory() as s:
        return s.scalar(select(Unit.id).where(Unit.slug == "block-1"))


def iso(t_ms: int) -> str:
    return pd.Timestamp(t_ms, unit="ms", tz="UTC").strftime("%Y-%m-%dT%H:%M:%SZ")


def store(session_factory, unit_id: int, frame: pd.DataFrame) -> None:
    with session_factory() as s:
        upsert_results(s, unit_id, frame)
        s.commit()


def block_frame(eta: np.ndarray, net_w: np.ndarray, fuel_w: np.ndarray, start: int = T0):
    """Results of the block as its model would store them (the columns used here)."""
    return pd.DataFrame(
        {
            "eta_1": eta,
            "eta_2": 0.96 * eta,  # invented: the fuel's exergy 4 % above its HHV
            "net_power_w": net_w,
            "gross_power_w": net_w,
            "fuel_heat_input_hhv_w": fuel_w,
            "flags": np.zeros(len(eta)),
        },
        index=pd.Index(start + MIN * np.arange(len(eta)), name="t_ms"),
    )


def reference_day(seed: int = 5) -> pd.DataFrame:
    """A day of invented block operation: load steps every 2 h between 60 and 100 MW
    (each step ramped over 5 min: not steady), efficiency rising with load plus noise,
    and a few intervals with a quality flag."""
    rng = np.random.default_rng(seed)
    n = 1440
    levels = np.repeat(
        [60e6, 80e6, 100e6, 70e6, 90e6, 65e6, 95e6, 75e6, 85e6, 100e6, 60e6, 80e6], 120
    )
    net = levels.astype(float)
    for i in range(120, n, 120):  # 5-minute ramps from the previous level
        net[i : i + 5] = np.linspace(levels[i - 1], levels[i], 7)[1:-1]
    net *= 1 + 0.002 * rng.standard_normal(n)
    eta = 0.36 + 0.04 * (net - 60e6) / 40e6 + 0.002 * rng.standard_normal(n)
    frame = block_frame(eta, net, net / eta)
    frame.iloc[rng.choice(n, 20, replace=False), frame.columns.get_loc("flags")] = 1.0
    return frame


def test_fit_through_the_api_equals_the_engine_on_the_same_steady_intervals(
    client, admin, read, make_key, session_factory
) -> None:
    apply(client, admin, block_plant(ambient=True))
    with session_factory() as s:
        unit_id = s.scalar(select(Unit.id).where(Unit.slug == "block-1"))
    frame = reference_day()
    store(session_factory, unit_id, frame)
    # One ambient reading per minute (degC), so the regressor is the plant's T0 per interval.
    ambient_c = 5.0 + 8.0 * np.sin(np.arange(1440) * 2 * np.pi / 1440)
    response = client.post(
        "/api/v1/readings/columnar",
        json={
            "plant": "test-works",
            "times": [T0 + i * MIN for i in range(1440)],
            "series": {"AMB": ambient_c.tolist()},
        },
        headers=make_key("ingest"),
    )
    assert response.status_code == 200, response.text

    body = {
        "metric": "eta_1",
        "start": iso(T0),
        "end": iso(T0 + 1440 * MIN),
        "regressors": ["ambient_temperature"],
        "note": "reference day",
    }
    created = client.post(f"{URL}/baselines", json=body, headers=admin)
    assert created.status_code == 201, created.text
    got = created.json()

    # The same fit done here with the engine: the block's documented steady limits over 15
    # intervals, positive load, no quality flag; T0 in kelvin.
    steady = steady_state(frame, BLOCK_STEADY, WINDOW) & (frame["net_power_w"] > 0)
    mask = steady & (frame["flags"] == 0)
    regressors = pd.DataFrame(
        {"net_power_w": frame["net_power_w"], "ambient_temperature_k": ambient_c + 273.15},
        index=frame.index,
    )
    want = fit_baseline(frame["eta_1"], regressors, load="net_power_w", mask=mask)
    assert got["version"] == 1 and got["active"] is False
    assert got["model"] == want.form
    assert got["regressors"] == ["net_power_w", "ambient_temperature_k"]
    assert got["terms"] == list(want.terms)
    np.testing.assert_allclose(got["coefficients"], want.coefficients, rtol=1e-10, atol=1e-13)
    stats = got["statistics"]
    assert stats["n"] == want.n == int(mask.sum())
    for key, value in (("r2", want.r2), ("cv_rmse", want.cv_rmse), ("rmse", want.residual_std)):
        assert stats[key] == pytest.approx(value, rel=1e-10)
    assert stats["meets_guideline_14"] is want.meets_guideline14
    assert got["counts"] == {
        "intervals": 1440,
        "steady": int(steady.sum()),
        "flagged": 20,
        "usable": want.n,
    }
    assert got["steady"]["window_intervals"] == WINDOW
    # Chart defaults: k = 0.5 and h for one false alarm a year of 60 s intervals.
    assert got["chart"]["k"] == 0.5 and got["chart"]["h"] == pytest.approx(12.0063, abs=1e-4)
    # The block has eta_2: its demonstrated-best table comes with every version.
    assert got["demonstrated_best"]["load"] == "net_power_w"
    assert len(got["demonstrated_best"]["bands"]) == 10
    assert got["note"] == "reference day" and got["created_by"] == "test"

    listed = client.get(f"{URL}/baselines", headers=read).json()
    assert [b["version"] for b in listed["baselines"]] == [1]
    assert (
        client.get(f"{URL}/baselines/1", headers=read).json()["coefficients"]
        == (got["coefficients"])
    )


def test_versions_are_numbered_and_one_is_active_per_metric(
    client, admin, read, unit_id, session_factory
) -> None:
    store(session_factory, unit_id, reference_day())
    period = {"start": iso(T0), "end": iso(T0 + 1440 * MIN)}
    for metric in ("eta_1", "eta_1", "eta_2"):
        response = client.post(f"{URL}/baselines", json={"metric": metric, **period}, headers=admin)
        assert response.status_code == 201, response.text
    for version in (1, 2, 3):
        response = client.post(f"{URL}/baselines/{version}/activate", headers=admin)
        assert response.status_code == 200, response.text
        # No readings stored: nothing to recompute.
        assert response.json()["recompute"] == {
            "start": period["start"],
            "end": None,
            "intervals": 0,
        }
    listed = client.get(f"{URL}/baselines", headers=read).json()["baselines"]
    assert [(b["version"], b["metric"], b["active"]) for b in listed] == [
        (1, "eta_1", False),
        (2, "eta_1", True),
        (3, "eta_2", True),
    ]
    assert listed[1]["activated_by"] == "test" and listed[1]["chart"]["origin"] == period["start"]
    # The database itself refuses a second active version of a metric.
    with session_factory() as s, pytest.raises(IntegrityError):
        s.execute(update(Baseline).where(Baseline.version == 1).values(active=True))
        s.commit()
    assert client.get(f"{URL}/baselines/9", headers=read).json()["detail"] == (
        "unit 'block-1' has no baseline version 9"
    )
    assert client.post(f"{URL}/baselines/1/activate", headers=read).status_code == 403


def test_problem_details_say_what_is_wrong(client, admin, unit_id, session_factory) -> None:
    period = {"start": iso(T0), "end": iso(T0 + 60 * MIN)}

    unknown = client.post(f"{URL}/baselines", json={"metric": "eta_9", **period}, headers=admin)
    assert unknown.status_code == 422
    problem = unknown.json()
    assert problem["type"] == "urn:lostwork:problem:unknown-metric"
    assert problem["detail"].startswith(
        "unknown metric 'eta_9' for unit 'block-1' (kind block); known: gross_power_w, "
        "net_power_w, fuel_heat_input_hhv_w, "
    )
    assert "net_heat_rate_j_per_kwh" in problem["known"]
    assert problem["errors"] == [{"field": "metric", "message": problem["detail"]}]

    nothing = client.post(f"{URL}/baselines", json={"metric": "eta_1", **period}, headers=admin)
    assert nothing.json()["detail"] == (
        "unit 'block-1' has no computed intervals from 2026-01-01T00:00:00Z to "
        "2026-01-01T01:00:00Z: nothing was computed there (no readings, or the pipeline "
        "has not run yet)"
    )

    # An hour ramping from 50 to 100 MW: never steady; 3 intervals flagged.
    net = np.linspace(50e6, 100e6, 60)
    frame = block_frame(np.full(60, 0.4), net, net / 0.4)
    frame.iloc[[10, 20, 30], frame.columns.get_loc("flags")] = 1.0
    store(session_factory, unit_id, frame)
    ramp = client.post(f"{URL}/baselines", json={"metric": "eta_1", **period}, headers=admin)
    assert ramp.status_code == 422
    problem = ramp.json()
    assert problem["type"] == "urn:lostwork:problem:no-steady-intervals"
    # Net power rises 0.85 MW a minute: over 15 minutes about 12 MW, far above 3 % of
    # ~75 MW; fuel input likewise above 5 %. The first 14 windows are not yet full.
    assert problem["detail"] == (
        "none of the 60 computed intervals of unit 'block-1' from 2026-01-01T00:00:00Z to "
        "2026-01-01T01:00:00Z was steady and free of quality flags: 60 were not steady "
        "(60 failed the limit on 'net_power_w' (spread within 3 % of its mean over 15 "
        "intervals = 900 s, without a gap); 60 failed the limit on 'fuel_heat_input_hhv_w' "
        "(spread within 5 % of its mean over 15 intervals = 900 s, without a gap); 0 had no "
        "positive load 'net_power_w' (unit off or load not computed)), and 3 carried "
        "quality flags"
    )
    assert (problem["intervals"], problem["steady"], problem["flagged"]) == (60, 0, 3)

    # Fifteen minutes at constant load: only the 15th interval has a full steady window.
    flat = block_frame(np.full(15, 0.4), np.full(15, 80e6), np.full(15, 200e6), T0 + 60 * MIN)
    store(session_factory, unit_id, flat)
    short = {"start": iso(T0 + 60 * MIN), "end": iso(T0 + 75 * MIN)}
    few = client.post(f"{URL}/baselines", json={"metric": "eta_1", **short}, headers=admin)
    assert few.status_code == 422
    assert few.json()["type"] == "urn:lostwork:problem:too-few-intervals"
    assert few.json()["detail"] == (
        "unit 'block-1', 2026-01-01T01:00:00Z to 2026-01-01T01:15:00Z: 1 usable intervals "
        "(steady, without quality flags, with 'eta_1' and every regressor) of 15: cannot "
        "fit any of the forms ['constant', 'linear', 'quadratic'] to 1 usable interval(s) "
        "(need at least 2, and load must vary for a linear or quadratic form)"
    )

    no_tag = client.post(
        f"{URL}/baselines",
        json={"metric": "eta_1", "regressors": ["ambient_temperature"], **period},
        headers=admin,
    )
    assert no_tag.json()["errors"][0] == {
        "field": "regressors[0]",
        "message": "regressors[0]: the plant of 'block-1' has no ambient tag, so there is no "
        "per-interval ambient temperature (name one as dead_state.ambient_tag in the plant "
        "file)",
    }
    reversed_range = client.post(
        f"{URL}/baselines",
        json={"metric": "eta_1", "start": period["end"], "end": period["start"]},
        headers=admin,
    )
    assert reversed_range.json()["detail"] == (
        "start (2026-01-01T01:00:00Z) must be before end (2026-01-01T00:00:00Z)"
    )
    naive = client.post(
        f"{URL}/baselines",
        json={"metric": "eta_1", "start": "2026-01-01T00:00:00", "end": period["end"]},
        headers=admin,
    )
    assert naive.json()["errors"][0]["field"] == "start"
    assert (
        client.post(
            "/api/v1/units/nope/baselines", json={"metric": "eta_1", **period}, headers=admin
        ).json()["detail"]
        == "no unit 'nope'"
    )


def alternating(n: int, level: float, amplitude: float) -> np.ndarray:
    """level +/- amplitude, alternating: the mean is exactly ``level`` for even ``n``."""
    return level + amplitude * np.where(np.arange(n) % 2 == 0, 1.0, -1.0)


def test_cost_of_drift_and_summary_equal_a_hand_calculation(
    client, admin, read, unit_id, session_factory
) -> None:
    # Reference: an hour at 90 MW net, then an hour at 100 MW, eta_1 = 0.40 +/- 0.001
    # (a constant baseline); then two hours at 95 MW and eta_1 = 0.38, burning
    # 95 / 0.38 = 250 MW of fuel (HHV). Invented scenario.
    n_ref, n_bad = 120, 120
    net_ref = np.repeat([90e6, 100e6], n_ref // 2)
    eta_ref = alternating(n_ref, 0.40, 0.001)
    # Fuel input as at exactly 0.40: the +/-0.001 scatter of eta_1 then costs +/- the
    # same amount in alternate minutes, nothing over the reference hours.
    reference = block_frame(eta_ref, net_ref, net_ref / 0.40)
    start_bad = T0 + n_ref * MIN
    drifted = block_frame(
        np.full(n_bad, 0.38), np.full(n_bad, 95e6), np.full(n_bad, 250e6), start_bad
    )
    store(session_factory, unit_id, pd.concat([reference, drifted]))
    created = client.post(
        f"{URL}/baselines",
        json={
            "metric": "eta_1",
            "start": iso(T0),
            "end": iso(start_bad),
            "forms": ["constant"],
            "activate": True,
        },
        headers=admin,
    )
    assert created.status_code == 201, created.text
    assert created.json()["coefficients"] == [pytest.approx(0.40, abs=1e-15)]
    with session_factory() as s:
        apply_baselines(s, unit_id, T0, start_bad + n_bad * MIN)  # the pipeline's stage
        s.commit()

    # Hand calculation (engine.cost formulas): extra fuel = Q (1 - eta/eta_expected)
    #   = 250 MW x (1 - 0.38/0.40) = 12.5 MW; money = 12.5e6 W x 3600 s/h x 10 EUR/GJ
    #   / 1e9 J/GJ = 450 EUR/h; CO2 = 12.5e6 x 3600 x 56e-9 kg/J = 2520 kg/h.
    # Over 2 h: 9.0e10 J (90 GJ), 900 EUR, 5040 kg. In the reference hours the drift is
    # +/-0.001 around 0.40 at constant fuel input: its cost sums to zero.
    summary = client.get(
        f"{URL}/drift/summary",
        params={"start": iso(start_bad), "end": iso(start_bad + n_bad * MIN)},
        headers=read,
    ).json()
    assert summary["currency"] == "EUR" and summary["cost_metric"] == "eta_1"
    totals = summary["totals"]
    assert totals["extra_fuel_j"] == pytest.approx(9.0e10, rel=1e-12)
    assert totals["cost"] == pytest.approx(900.0, rel=1e-12)
    assert totals["co2_kg"] == pytest.approx(5040.0, rel=1e-12)
    assert (totals["counted_seconds"], totals["range_seconds"]) == (7200.0, 7200.0)
    current = summary["metrics"][0]["current"]
    assert current["t"] == iso(start_bad + (n_bad - 1) * MIN)
    assert current["expected"] == pytest.approx(0.40, abs=1e-15)
    assert current["drift"] == pytest.approx(-0.02, abs=1e-15)
    assert current["drift_rel"] == pytest.approx(-0.05, abs=1e-14)

    whole = client.get(
        f"{URL}/drift/summary",
        params={"start": iso(T0), "end": iso(start_bad + n_bad * MIN)},
        headers=read,
    ).json()["totals"]
    assert whole["cost"] == pytest.approx(900.0, rel=1e-9)
    per_interval = client.get(
        f"{URL}/results",
        params={
            "metrics": "drift_cost_per_h,expected_eta_1",
            "start": iso(start_bad),
            "end": iso(start_bad + 2 * MIN),
        },
        headers=read,
    ).json()["series"]
    assert per_interval[0]["mean"] == [pytest.approx(450.0, rel=1e-12)] * 2
    assert per_interval[0]["unit"] == "1/h"


def test_compare_gives_each_version_guideline14_statistics_on_the_period(
    client, admin, read, unit_id, session_factory
) -> None:
    # Period A at eta_1 = 0.42, an hour later period B at 0.40 (both +/- 0.001 at
    # 100 MW net): two constant baselines. On B, version 1 over-predicts by 0.02.
    n = 60
    net = alternating(n, 100e6, 0.1e6)
    a = block_frame(alternating(n, 0.42, 0.001), net, net / 0.42)
    b_start = T0 + 2 * n * MIN
    b = block_frame(alternating(n, 0.40, 0.001), net, net / 0.40, b_start)
    store(session_factory, unit_id, pd.concat([a, b]))
    for start in (T0, b_start):
        body = {
            "metric": "eta_1",
            "start": iso(start),
            "end": iso(start + n * MIN),
            "forms": ["constant"],
        }
        assert client.post(f"{URL}/baselines", json=body, headers=admin).status_code == 201
    got = client.get(
        f"{URL}/baselines/compare",
        params={"a": 1, "b": 2, "start": iso(b_start), "end": iso(b_start + n * MIN)},
        headers=read,
    ).json()
    # B follows a gap, so its first 14 intervals lack a full steady window: 46 usable,
    # from its 15th (index 14, eta = 0.401) on, alternating.
    # Guideline 14 on B for version 1 (p = 1), residuals y - yhat = -0.019, -0.021, ...:
    #   NMBE = sum(y - yhat) / ((n - p) ybar) = 46 x (-0.02) / (45 x 0.40)
    #   CV(RMSE) = sqrt(sum (y - yhat)^2 / (n - p)) / ybar = sqrt(23 (0.019^2 + 0.021^2) / 45) / 0.40
    side_a = got["a"]["period"]
    assert side_a["n"] == 46
    assert side_a["nmbe"] == pytest.approx(46 * -0.02 / (45 * 0.40), rel=1e-9)
    cv = math.sqrt(23 * (0.019**2 + 0.021**2) / 45) / 0.40
    assert side_a["cv_rmse"] == pytest.approx(cv, rel=1e-9)
    assert side_a["meets_guideline_14"] is True  # |NMBE| 5.1 % < 10 %, CV 5.1 % < 30 %
    assert got["b"]["period"]["nmbe"] == pytest.approx(0.0, abs=1e-12)
    assert got["b"]["statistics"]["n"] == 46
    assert got["difference"]["n"] == 60
    assert got["difference"]["mean"] == pytest.approx(-0.02, abs=1e-12)
    assert got["series"]["bucket_seconds"] is None and len(got["series"]["t"]) == 60
    mixed = client.post(
        f"{URL}/baselines",
        json={"metric": "eta_2", "start": iso(T0), "end": iso(T0 + n * MIN)},
        headers=admin,
    )
    assert mixed.status_code == 201, mixed.text
    assert client.get(f"{URL}/baselines/compare", params={"a": 1, "b": 3}, headers=read).json()[
        "detail"
    ] == (
        "versions 1 (eta_1) and 3 (eta_2) model different metrics; compare versions of the "
        "same metric"
    )


@pytest.fixture
def run(db_url, session_factory, monkeypatch):
    from typer.testing import CliRunner

    from api.cli import app
    from api.core.config import get_settings

    monkeypatch.setenv("LOSTWORK_DATABASE_URL", db_url)
    get_settings.cache_clear()
    runner = CliRunner()
    yield lambda *args: runner.invoke(app, [str(a) for a in args])
    get_settings.cache_clear()


def test_cli_fits_a_period_given_in_plant_local_time_and_activates(
    run, unit_id, session_factory
) -> None:
    frame = reference_day()
    store(session_factory, unit_id, frame)
    # The test plant keeps Europe/Berlin time: 01:00 local on 1 January is 00:00 UTC.
    fitted = run(
        "baseline", "fit", "--unit", "block-1", "--metric", "eta_1",
        "--from", "2026-01-01T01:00", "--to", "2026-01-02T01:00",
    )  # fmt: skip
    assert fitted.exit_code == 0, fitted.output
    steady = steady_state(frame, BLOCK_STEADY, WINDOW) & (frame["net_power_w"] > 0)
    n = int((steady & (frame["flags"] == 0)).sum())
    assert fitted.output.startswith(
        "unit block-1: baseline version 1 of eta_1, fitted on 2026-01-01T00:00Z to "
        f"2026-01-02T00:00Z: linear in net_power_w; n = {n} of 1440 computed intervals "
        f"({int(steady.sum())} steady, 20 flagged); R2 0."
    )
    activated = run("baseline", "activate", "--unit", "block-1", "--version", "1")
    assert activated.exit_code == 0, activated.output
    assert activated.output.splitlines() == [
        activated.output.splitlines()[0],
        "  no readings from 2026-01-01T00:00Z on: nothing to recompute",
    ]
    assert "of eta_1 (active), fitted" in activated.output
    unknown = run(
        "baseline", "fit", "--unit", "block-1", "--metric", "eta_9",
        "--from", "2026-01-01", "--to", "2026-01-02",
    )  # fmt: skip
    assert unknown.exit_code == 1
    assert "unknown metric 'eta_9' for unit 'block-1' (kind block); known: " in unknown.output
