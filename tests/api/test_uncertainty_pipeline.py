"""Uncertainty bands through the pipeline, on SQLite and PostgreSQL: readings pushed
through the API -> worker -> stored ``u_``/``u95_`` columns and judged flags, compared
with :func:`engine.uncertainty.propagate` called here on the same interval means and the
figures written out by hand; the bands in the results API; the contributors route
against a hand calculation with the independent ``iapws`` package.

Figures written out here (plant file of tests/api/factories.py, defaults of
engine.uncertainty.INSTRUMENT_DEFAULTS, all "common practice"): a 95 % figure is halved
(coverage factor 2, ASME PTC 19.1-2018 / JCGM 100:2008 G.6.6); the random part of an
interval mean is s / sqrt(n) of the readings inside it (PTC 19.1). Unit conversions as in
tests/api/test_pipeline.py (NIST SP 811, 2008 ed., App. B).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from iapws import IAPWS97

from api.pipeline.worker import run_once
from engine.catalogue import ModelContext
from engine.checks import Flag
from engine.uncertainty import FUEL_HEATING_VALUE, InputUncertainty, propagate
from engine.units.boiler import KIND as BOILER
from tests.api.factories import ATMOSPHERE_PA, T0, plant_document
from tests.api.test_pipeline import BASE, DEAD, GAS, MIN, TO_SI, push, stored_results

PARAMS = BOILER.resolve_parameters({"mass_balance_tolerance": 0.03})


@pytest.fixture
def ingest(make_key) -> dict:
    return make_key("ingest")


@pytest.fixture
def read(make_key) -> dict:
    return make_key("read")


def noisy(minutes: int, scale: float = 0.01, seed: int = 3, **base) -> dict[str, np.ndarray]:
    """Per tag, readings every 10 s around BASE (or the given values) with ``scale`` scatter."""
    rng = np.random.default_rng(seed)
    values = {**BASE, **base}
    return {t: v * (1 + scale * rng.standard_normal(minutes * 6)) for t, v in values.items()}


def per_minute(values: dict[str, np.ndarray], minutes: int):
    """Interval means and s / sqrt(n) (n = 6 readings a minute) per role, in SI."""
    si = {role: convert(values[tag]).reshape(minutes, 6) for tag, (role, convert) in TO_SI.items()}
    index = pd.Index(T0 + MIN * np.arange(minutes), name="t_ms")
    means = pd.DataFrame({r: v.mean(axis=1) for r, v in si.items()}, index=index)
    random = {r: v.std(axis=1, ddof=1) / np.sqrt(6) for r, v in si.items()}
    return means, random


def hand_uncertainties(means: pd.DataFrame, random: dict[str, np.ndarray]):
    """The test plant's figures as standard uncertainties, by hand."""
    x = means
    systematic = {
        # Stated in the plant file: 1 % of reading (standard), 0.1 bar, 0.5 K.
        "feedwater_flow": 0.01 * x["feedwater_flow"],
        "feedwater_pressure": np.full(len(x), 0.1e5),
        "feedwater_temperature": np.full(len(x), 0.5),
        # Defaults at 95 %: volume flow 1 % and mass flow 2 % of reading, pressure 0.5 %
        # of the gauge reading (the psig number shown), temperature 2 K.
        "fuel_volume_flow": 0.01 / 2 * x["fuel_volume_flow"],
        "steam_flow": 0.02 / 2 * x["steam_flow"],
        "steam_pressure": 0.005 / 2 * (x["steam_pressure"] - ATMOSPHERE_PA),
        "steam_temperature": np.full(len(x), 1.0),
    }
    out = {
        role: InputUncertainty(np.asarray(b, float), random[role]) for role, b in systematic.items()
    }
    # The fuel's heating value (stated 50 MJ/kg, no figure): 1 % at 95 % (gas, default).
    out[FUEL_HEATING_VALUE] = InputUncertainty(np.full(len(x), 0.01 / 2 * 50e6), 0.0)
    return out


def test_stored_bands_equal_the_engine_on_the_same_means_and_figures(
    client, plant, ingest, read, session_factory
) -> None:
    minutes = 4
    values = noisy(minutes)
    push(client, ingest, values)
    assert run_once(session_factory, "w1") == 1
    got = stored_results(session_factory)

    means, random = per_minute(values, minutes)
    want = propagate(
        BOILER, means, PARAMS, ModelContext(DEAD, GAS), hand_uncertainties(means, random)
    ).table()
    assert list(got.index) == list(means.index)
    for metric in ("eta_1", "eta_1_lhv", "eta_2", "sgen_w_per_k"):
        for prefix in ("u_", "u_random_", "u95_"):
            np.testing.assert_allclose(
                got[prefix + metric].to_numpy(float),
                want[prefix + metric].to_numpy(float),
                rtol=1e-9,
                err_msg=prefix + metric,
            )
    # A boiler with plant-grade meters: about 1.5 points at one standard uncertainty,
    # with a random part from the 1 % scatter of six readings a minute.
    assert 0.010 < got["u_eta_1"].iloc[0] < 0.025
    assert 0.0 < got["u_random_eta_1"].iloc[0] < got["u_eta_1"].iloc[0]
    np.testing.assert_allclose(got["u95_eta_1"], 2 * got["u_eta_1"], rtol=1e-12)
    # No band for a result this configuration does not produce (no flue-gas roles).
    assert "u_eta_1_indirect" not in got.columns

    # The results API carries the band as metrics; /latest puts it beside each value.
    series = client.get(
        "/api/v1/units/boiler-a/results",
        params={"metrics": "eta_1,u95_eta_1", "start": "2026-01-01T00:00:00Z"},
        headers=read,
    ).json()["series"]
    assert [s["metric"] for s in series] == ["eta_1", "u95_eta_1"]
    assert series[1]["unit"] == "1"
    assert series[1]["mean"] == pytest.approx(got["u95_eta_1"].tolist(), rel=1e-12)
    latest = client.get("/api/v1/units/boiler-a/latest", headers=read).json()
    last = got.iloc[-1]
    assert latest["uncertainty"]["eta_1"] == pytest.approx(last["u95_eta_1"], rel=1e-12)
    assert latest["uncertainty"]["sgen_w_per_k"] == pytest.approx(
        last["u95_sgen_w_per_k"], rel=1e-12
    )
    assert "heat_absorbed_w" not in latest["uncertainty"]


def test_efficiency_above_one_is_flagged_only_beyond_its_band(
    client, plant, ingest, session_factory
) -> None:
    # At BASE eta_1 = 0.8685. Less fuel for the same steam: minute 0 at about 1.015
    # (above 1, inside 2 u of about 0.03), minute 1 at about 1.25 (far beyond).
    first = noisy(1, scale=0.001, seed=5, GAS=BASE["GAS"] * 0.8685 / 1.015)
    second = noisy(1, scale=0.001, seed=6, GAS=BASE["GAS"] * 0.8685 / 1.25)
    values = {tag: np.concatenate([first[tag], second[tag]]) for tag in first}
    push(client, ingest, values)
    run_once(session_factory, "w1")
    got = stored_results(session_factory)

    means, _ = per_minute(values, 2)
    raw = BOILER.model(means, PARAMS, ModelContext(DEAD, GAS))
    bit = int(Flag.EFFICIENCY_ABOVE_ONE)
    # The model's fixed rule (eta_1 > 1) raises the bit in both minutes ...
    assert [int(f) & bit for f in raw["flags"]] == [bit, bit]
    eta, u = got["eta_1"].to_numpy(), got["u_eta_1"].to_numpy()
    assert 1.0 < eta[0] < 1.0 + 2 * u[0] and eta[1] > 1.0 + 2 * u[1]
    # ... judged against the band (eta_1 - 1 > 2 u_eta_1) only the second keeps it.
    assert [int(f) & bit for f in got["flags"]] == [0, bit]


def boiler_enthalpies() -> tuple[float, float, float]:
    """h of main steam, feedwater and dead-state water at BASE, from iapws (IAPWS-IF97). [J/kg]"""
    steam = IAPWS97(P=TO_SI["MS-P"][1](BASE["MS-P"]) / 1e6, T=TO_SI["MS-T"][1](BASE["MS-T"]))
    water = IAPWS97(P=TO_SI["FW-P"][1](BASE["FW-P"]) / 1e6, T=TO_SI["FW-T"][1](BASE["FW-T"]))
    dead = IAPWS97(P=0.101325, T=298.15)
    return steam.h * 1e3, water.h * 1e3, dead.h * 1e3


def test_contributors_rank_fuel_flow_and_heating_value_first(
    client, admin, ingest, read, session_factory
) -> None:
    doc = plant_document()
    tags = doc["tags"]
    tags["GAS"]["uncertainty"] = "2% of reading"
    tags["FW-FLOW"]["uncertainty"] = "0.5% of reading"
    tags["MS-FLOW"]["uncertainty"] = "0.5% of reading"
    tags["FW-P"]["uncertainty"] = 0.01
    tags["FW-T"]["uncertainty"] = 0.05
    tags["MS-P"]["uncertainty"] = 0.1
    tags["MS-T"]["uncertainty"] = 0.1
    doc["fuels"]["gas"]["uncertainty"] = {"heating_value": "2%"}
    assert client.post("/api/v1/plants", json=doc, headers=admin).status_code == 200
    minutes = 3
    values = noisy(minutes, scale=0.002, seed=9)
    push(client, ingest, values)
    run_once(session_factory, "w1")

    body = client.get("/api/v1/units/boiler-a/uncertainty?metric=eta_1", headers=read).json()
    assert (body["basis"], body["intervals_used"], body["metric"]) == ("interval", 1, "eta_1")

    # Hand calculation (direct method, eta_1 = Q / (V rho HHV), Q = m_s (h_s - h0) -
    # m_fw (h_fw - h0)): relative sensitivities -1 (fuel flow), -1 (heating value),
    # m_s (h_s - h0) / Q (steam flow, about 1.33), -m_fw (h_fw - h0) / Q (feedwater,
    # about -0.33); relative variances (S b)^2 + (S s)^2 with s of the latest minute's
    # six readings. Temperatures and pressures, stated tiny, are left out.
    h_s, h_fw, h0 = boiler_enthalpies()
    means, random = per_minute(values, minutes)
    last = means.iloc[-1]
    q_s = last["steam_flow"] * (h_s - h0)
    q_fw = last["feedwater_flow"] * (h_fw - h0)
    sensitivity = {
        "fuel_volume_flow": -1.0,
        FUEL_HEATING_VALUE: -1.0,
        "steam_flow": q_s / (q_s - q_fw),
        "feedwater_flow": -q_fw / (q_s - q_fw),
    }
    stated = {"fuel_volume_flow": 0.02, FUEL_HEATING_VALUE: 0.02}
    stated |= {"steam_flow": 0.005, "feedwater_flow": 0.005}
    variance = {
        name: sensitivity[name] ** 2
        * (stated[name] ** 2 + (random[name][-1] / last[name] if name in random else 0.0) ** 2)
        for name in stated
    }
    total = sum(variance.values())
    ranked = body["contributors"]
    assert [c["input"] for c in ranked[:2]] == ["fuel_volume_flow", FUEL_HEATING_VALUE]
    assert [c["input"] for c in ranked[2:4]] == ["steam_flow", "feedwater_flow"]
    by_name = {c["input"]: c for c in ranked}
    for name, share in variance.items():
        assert by_name[name]["share"] == pytest.approx(share / total, abs=0.005), name
        assert by_name[name]["sensitivity_relative"] == pytest.approx(
            sensitivity[name], abs=2e-3
        ), name
    assert sum(c["share"] for c in ranked) == pytest.approx(1.0, abs=1e-12)
    assert (by_name["fuel_volume_flow"]["tag"], by_name[FUEL_HEATING_VALUE]["tag"]) == ("GAS", None)
    assert by_name[FUEL_HEATING_VALUE]["source"] == "stated"
    # The same interval's stored band: the route recomputes what the worker stored.
    got = stored_results(session_factory)
    assert body["u"] == pytest.approx(got["u_eta_1"].iloc[-1], rel=1e-9)
    assert body["u95"] == pytest.approx(got["u95_eta_1"].iloc[-1], rel=1e-9)

    # Over the period: the mean of three intervals; random parts shrink, systematic not.
    period = client.get(
        "/api/v1/units/boiler-a/uncertainty",
        params={"metric": "eta_1", "start": "2026-01-01T00:00:00Z", "end": "2026-01-01T01:00:00Z"},
        headers=read,
    ).json()
    assert (period["basis"], period["intervals_in_period"], period["intervals_used"]) == (
        "mean",
        3,
        3,
    )
    assert period["value"] == pytest.approx(got["eta_1"].mean(), rel=1e-9)
    assert period["u_systematic"] == pytest.approx(got["u_eta_1"].mean(), rel=0.02)
    assert period["u_random"] < got["u_random_eta_1"].max()


def test_contributors_route_errors(client, plant, read) -> None:
    response = client.get("/api/v1/units/boiler-a/uncertainty?metric=eta_9", headers=read)
    assert response.status_code == 422
    assert response.json()["errors"][0]["field"] == "metric"
    assert "computes no metric 'eta_9'" in response.json()["detail"]
    response = client.get("/api/v1/units/boiler-a/uncertainty", headers=read)
    assert response.status_code == 404
    assert response.json()["detail"] == "unit 'boiler-a' has no computed interval in the period"
    response = client.get("/api/v1/units/nowhere/uncertainty", headers=read)
    assert (response.status_code, response.json()["detail"]) == (404, "no unit 'nowhere'")
