"""Second-law headroom (engine/headroom.py).

Outside references:
- Hyndman & Fan (1996), The American Statistician 50(4), definition 7 (numpy's default
  percentile), evaluated by hand on a small band.
- The exergy balance of the block model (fuel exergy = net power + destroyed and lost;
  Bejan, Tsatsaronis & Moran 1996, Ch. 3), which must close: destroyed_fraction = 1 - eta_2.
- A hand calculation of our own fictional scenario, and agreement with the drift-cost
  formula of engine/cost.py when the demonstrated best is taken as the expectation.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

from engine.catalogue import ModelContext
from engine.cost import extra_fuel_from_efficiency
from engine.deadstate import dead_state
from engine.fuels import FuelProperties
from engine.headroom import DemonstratedBest, demonstrated_best, headroom
from engine.units.block import block_performance


def _two_band_history():
    # Band 0 (40-70 MW): eta_2 = 0.300, 0.301, ..., 0.309 at 50 MW (10 values)
    # Band 1 (70-100 MW): eta_2 = 0.35 at 85 MW, 5 values only
    eta = np.concatenate([0.300 + 0.001 * np.arange(10), np.full(5, 0.35)])
    load = np.concatenate([np.full(10, 50e6), np.full(5, 85e6)])
    return pd.Series(eta, name="eta_2"), pd.Series(load, name="gross_power_w")


def test_percentile_per_band_by_hand():
    # Definition 7: n = 10, q = 0.95, h = (n - 1) q = 8.55 -> x_8 + 0.55 (x_9 - x_8)
    #   = 0.308 + 0.55 * 0.001 = 0.30855
    eta, load = _two_band_history()
    best = demonstrated_best(eta, load, bands=2, min_count=6, load_range=(40e6, 100e6))
    assert best.edges == (40e6, 70e6, 100e6)
    assert best.counts == (10, 5)
    assert best.best[0] == pytest.approx(0.30855, abs=1e-15)
    assert np.isnan(best.best[1])  # 5 < min_count 6: not demonstrated
    assert best.load == "gross_power_w"


def test_headroom_scenario_by_hand():
    # Demo block at 50 MW: fuel exergy in 150 MW, eta_2 = 0.300, so destroyed and lost
    # = 150 - 45 = 105 MW, fraction 0.7. Best demonstrated in its band 0.30855.
    #   recoverable  = 150e6 * (0.30855 - 0.300)           = 1 282 500 W
    #   fuel exergy saved at the same output = 1 282 500 / 0.30855 = 4 156 538.6485 W
    #   fuel exergy / HHV of the scenario gas = 0.94
    #   fuel HHV saved = 4 156 538.6485 / 0.94            = 4 421 849.6261 W
    #   per hour = 15.91865865 GJ/h; at 8.50 /GJ           = 135.3085986 /h
    eta, load = _two_band_history()
    best = demonstrated_best(eta, load, bands=2, min_count=6, load_range=(40e6, 100e6))
    out = headroom(
        150e6, 105e6, 0.300, 50e6, best, fuel_price_per_gj=8.50, fuel_exergy_per_hhv=0.94
    )
    row = out.iloc[0]
    assert row["destroyed_fraction"] == pytest.approx(0.7, abs=1e-15)
    assert row["eta_2_best"] == pytest.approx(0.30855, abs=1e-15)
    assert row["recoverable_w"] == pytest.approx(1_282_500.0, abs=1e-6)
    assert row["recoverable_fuel_hhv_w"] == pytest.approx(4_421_849.6261, abs=1e-4)
    assert row["recoverable_cost_per_h"] == pytest.approx(135.3085986, abs=1e-7)
    assert bool(row["outside_bands"]) is False


def test_recoverable_value_matches_the_drift_cost_formula():
    # Taking the best as the expectation, the fuel saved equals Q_fuel (1 - eta_2/eta_best).
    eta, load = _two_band_history()
    best = demonstrated_best(eta, load, bands=2, min_count=6, load_range=(40e6, 100e6))
    ratio = 0.94
    q_hhv = np.array([150e6, 160e6]) / ratio
    eta_now = np.array([0.300, 0.2951])
    out = headroom(q_hhv * ratio, q_hhv * ratio * (1 - eta_now), eta_now, 50e6, best,
                   fuel_exergy_per_hhv=ratio)  # fmt: skip
    expected = extra_fuel_from_efficiency(q_hhv, eta_now, best.best[0])
    np.testing.assert_allclose(out["recoverable_fuel_hhv_w"], expected, rtol=1e-12)
    assert out["recoverable_cost_per_h"].isna().all()  # no price given


def test_clipping_outside_bands_and_missing_best():
    eta, load = _two_band_history()
    best = demonstrated_best(eta, load, bands=2, min_count=6, load_range=(40e6, 100e6))
    index = pd.date_range("2025-05-01", periods=5, freq="60s", tz="UTC")
    loads = pd.Series([50e6, 30e6, 85e6, 100e6, np.nan], index=index)
    out = headroom(100e6, 60e6, pd.Series([0.40, 0.30, 0.30, 0.30, 0.30], index=index),
                   loads, best)  # fmt: skip
    assert out.index.equals(index)
    # row 0: better than the best -> 0, never negative
    assert out["recoverable_w"].iloc[0] == 0.0
    # row 1: 30 MW below the bands; row 4: load unknown (not known to be outside)
    assert out["outside_bands"].tolist() == [False, True, False, False, False]
    # rows 2 and 3: band 1 (the top edge belongs to it) has too few intervals
    assert out["eta_2_best"].isna().tolist() == [False, True, True, True, True]
    assert out["recoverable_w"].isna().tolist() == [False, True, True, True, True]
    assert out["destroyed_fraction"].tolist() == pytest.approx([0.6] * 5)


def test_block_exergy_balance_closes_through_headroom():
    # The block model's own exergy balance: destroyed and lost = F - W_net, so the
    # fraction must equal 1 - eta_2 to round-off.
    gas = FuelProperties("scenario gas", hhv_j_per_kg=52.2e6, lhv_j_per_kg=47.1e6)
    rng = np.random.default_rng(9)
    n = 200
    inputs = pd.DataFrame(
        {
            "gross_power": rng.uniform(40e6, 100e6, n),
            "auxiliary_power": 4e6,
            "fuel_mass_flow": rng.uniform(2.5, 5.5, n),
            "main_steam_temperature": 813.15,
        }
    )
    res = block_performance(inputs, {}, ModelContext(dead_state(), gas))
    best = demonstrated_best(res["eta_2"], res["gross_power_w"], bands=4, min_count=10)
    out = headroom(res["fuel_exergy_w"], res["exergy_destroyed_and_lost_w"], res["eta_2"],
                   res["gross_power_w"], best)  # fmt: skip
    np.testing.assert_allclose(out["destroyed_fraction"], 1.0 - res["eta_2"], rtol=0, atol=1e-12)
    assert (out["recoverable_w"] >= 0).all()
    assert sum(best.counts) == n


def test_round_trip_and_errors():
    eta, load = _two_band_history()
    best = demonstrated_best(eta, load, bands=2, min_count=6, load_range=(40e6, 100e6))
    again = DemonstratedBest.from_dict(json.loads(json.dumps(best.to_dict(), allow_nan=False)))
    assert again.edges == best.edges and again.counts == best.counts
    assert again.best[0] == best.best[0] and np.isnan(again.best[1])
    cases = [
        (dict(bands=0), "bands must be a whole number >= 1, got 0"),
        (dict(percentile=101.0), "percentile must be within 0..100, got 101.0"),
        (dict(load_range=(5.0, 5.0)), "load range must have max > min, got (5.0, 5.0)"),
        (
            dict(mask=np.zeros(15, dtype=bool)),
            "no usable intervals to take the demonstrated best from",
        ),
    ]
    for kwargs, message in cases:
        with pytest.raises(ValueError) as err:
            demonstrated_best(eta, load, **kwargs)
        assert str(err.value) == message
