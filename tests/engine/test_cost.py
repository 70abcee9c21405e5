"""Cost and emissions of drift (engine/cost.py).

Outside references: hand calculations of our own fictional scenarios (the demo plant's
gas-fired boiler B-2 and its 100 MW block), written out step by step; and the identity
heat rate = 3.6e6 / eta_1 (definition of heat rate, ASME PTC 46-2015 Sec. 5, from
memory), which makes the two routes to the extra fuel agree to round-off.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from engine.cost import (
    cumulative,
    drift_cost,
    extra_fuel_from_efficiency,
    extra_fuel_from_heat_rate,
)

# Scenario emission factor for the demo plant's pipeline gas: 50.3 kg CO2 per GJ HHV
# (our own round figure for natural gas, common practice order of magnitude).
CO2_KG_PER_J = 50.3e-9
PRICE_PER_GJ = 8.50  # scenario fuel price, currency per GJ HHV


def test_boiler_shift_by_hand():
    # Boiler B-2 burns 50 MW (HHV). Baseline expects eta_1 = 0.86 at this load and
    # weather; it measures 0.84.
    #   extra fuel   = 50e6 * (1 - 0.84/0.86) = 50e6 * 0.02/0.86      = 1 162 790.6977 W
    #   per hour     = 1 162 790.6977 W * 3600 s                      = 4.186046512 GJ/h
    #   cost         = 4.186046512 GJ/h * 8.50 /GJ                    = 35.58139535 /h
    #   CO2          = 4.186046512e9 J/h * 50.3e-9 kg/J               = 210.5581395 kg/h
    # One 8 h shift = 480 intervals of 60 s, of which 30 have no value (unit tripped):
    #   450 counted intervals = 27 000 s = 7.5 h
    #   fuel  = 1 162 790.6977 W * 27 000 s = 31.39534884 GJ
    #   cost  = 35.58139535 /h * 7.5 h      = 266.8604651
    #   CO2   = 210.5581395 kg/h * 7.5 h    = 1579.186047 kg
    extra = extra_fuel_from_efficiency(50e6, 0.84, 0.86)
    assert extra == pytest.approx(1_162_790.6977, abs=1e-4)
    rates = drift_cost(np.full(480, extra), PRICE_PER_GJ, CO2_KG_PER_J)
    assert rates["cost_per_h"].iloc[0] == pytest.approx(35.58139535, abs=1e-8)
    assert rates["co2_kg_per_h"].iloc[0] == pytest.approx(210.5581395, abs=1e-7)

    rates.loc[100:129, ["extra_fuel_w", "cost_per_h", "co2_kg_per_h"]] = np.nan
    total = cumulative(rates, 60.0).iloc[-1]
    assert total["counted_s"] == 27_000.0
    assert total["extra_fuel_j"] == pytest.approx(31.39534884e9, rel=1e-10)
    assert total["cost"] == pytest.approx(266.8604651, abs=1e-7)
    assert total["co2_kg"] == pytest.approx(1579.186047, abs=1e-6)


def test_block_heat_rate_shift_by_hand():
    # The 100 MW (net) block: expected net heat rate 9.80 MJ/kWh, measured 9.95 MJ/kWh.
    #   extra fuel = (9.95e6 - 9.80e6) J/kWh * 100e6 W / 3.6e6 J/kWh = 4 166 666.667 W
    #   per hour   = 4 166 666.667 W * 3600 s = 15 GJ/h -> 15 * 8.50 = 127.50 /h
    #   CO2        = 15e9 J/h * 50.3e-9 kg/J = 754.5 kg/h
    extra = extra_fuel_from_heat_rate(9.95e6, 9.80e6, 100e6)
    assert extra == pytest.approx(4_166_666.667, abs=1e-3)
    rates = drift_cost(extra, PRICE_PER_GJ, CO2_KG_PER_J)
    assert rates["cost_per_h"].iloc[0] == pytest.approx(127.50, abs=1e-9)
    assert rates["co2_kg_per_h"].iloc[0] == pytest.approx(754.5, abs=1e-9)


def test_heat_rate_and_efficiency_routes_agree():
    # HR = 3.6e6 / eta and Q_fuel = HR * P / 3.6e6: both routes give the same extra fuel.
    power = np.array([60e6, 80e6, 100e6])
    eta_expected = np.array([0.355, 0.368, 0.372])
    eta_actual = np.array([0.350, 0.370, 0.360])
    q_fuel = power / eta_actual
    by_eta = extra_fuel_from_efficiency(q_fuel, eta_actual, eta_expected)
    by_hr = extra_fuel_from_heat_rate(3.6e6 / eta_actual, 3.6e6 / eta_expected, power)
    np.testing.assert_allclose(by_eta, by_hr, rtol=1e-12)
    # sign convention: the middle unit beats its baseline -> negative (a saving)
    assert np.sign(by_eta).tolist() == [1.0, -1.0, 1.0]


def test_series_in_series_out_and_nan_propagates():
    index = pd.date_range("2025-04-01", periods=4, freq="60s", tz="UTC")
    q = pd.Series([50e6, 50e6, np.nan, 50e6], index=index)
    eta = pd.Series([0.84, 0.84, 0.84, 0.84], index=index)
    expected = pd.Series([0.86, np.nan, 0.86, 0.0], index=index)  # NaN: extrapolated
    extra = extra_fuel_from_efficiency(q, eta, expected)
    assert isinstance(extra, pd.Series)
    assert extra.index.equals(index)
    assert extra.isna().tolist() == [False, True, True, True]
    rates = drift_cost(extra, PRICE_PER_GJ)
    assert rates.index.equals(index)
    assert rates["co2_kg_per_h"].isna().all()  # no emission factor configured


def test_cumulative_with_per_row_lengths_and_running_sums():
    # 3 intervals: 1 MW for 60 s, 2 MW for 120 s, 1 MW for 30 s:
    #   running energy 60e6, 60e6 + 240e6 = 300e6, 300e6 + 30e6 = 330e6 J
    rates = drift_cost([1e6, 2e6, 1e6], 10.0, 5e-8)
    out = cumulative(rates, [60.0, 120.0, 30.0])
    assert out["extra_fuel_j"].tolist() == pytest.approx([60e6, 300e6, 330e6])
    # cost: 330e6 J = 0.33 GJ * 10 = 3.3; CO2: 330e6 J * 5e-8 kg/J = 16.5 kg
    assert out["cost"].iloc[-1] == pytest.approx(3.3, abs=1e-12)
    assert out["co2_kg"].iloc[-1] == pytest.approx(16.5, abs=1e-12)
    assert out["counted_s"].tolist() == [60.0, 180.0, 210.0]
    with pytest.raises(ValueError) as err:
        cumulative(rates, -60.0)
    assert str(err.value) == "interval_s must be finite and >= 0"
