"""Generating unit as a whole (engine/units/block.py).

Outside references:
- heat rate = 3.6e6 J/kWh times fuel heat input over power (definition of the watt-hour;
  the trade's heat rate as used in ASME PTC 46), worked by hand below;
- the Carnot efficiency 1 - T0/T_hot as the bound of any heat engine (Kotas 1995,
  Ch. 1; Bejan, Tsatsaronis & Moran 1996, Ch. 2; chapters from memory);
- Gouy-Stodola (Bejan et al. 1996, Eq. 3.24): exergy destroyed plus lost = T0 Sgen, the
  two sides computed by different routes in the model, checked to 1e-9 relative.
"""

from __future__ import annotations

import doctest

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import engine.units.block as block_module
from engine.catalogue import ModelContext
from engine.checks import Flag
from engine.deadstate import dead_state
from engine.fuels import FuelProperties
from engine.units.block import KIND, block_performance

# Fictional natural gas of our own; ratio 1.04 as in engine/fuels.py (Szargut, Morris &
# Steward 1988, Table 2.4, natural gas).
GAS = FuelProperties(
    "fictional pipeline gas",
    hhv_j_per_kg=52.5e6,
    lhv_j_per_kg=47.4e6,
    exergy_to_lhv_ratio=1.04,
    density_kg_per_m3=0.78,
)
T0 = 298.15

# Our own scenario: a fictional 180 MW gas-fired reheat unit, 5 % house load.
UNIT = {
    "gross_power": 180e6,
    "auxiliary_power": 9e6,
    "fuel_mass_flow": 9.0,
    "main_steam_temperature": 813.15,
    "reheat_temperature": 811.15,
}


def _run(rows, params=None, t0=T0, index=None, fuel=GAS) -> pd.DataFrame:
    rows = [rows] if isinstance(rows, dict) else rows
    context = ModelContext(dead=dead_state(t0), fuel=fuel)
    return block_performance(pd.DataFrame(rows, index=index), params or {}, context)


def test_worked_example_by_hand():
    out = _run(UNIT).iloc[0]
    # By hand: Q_hhv = 9.0 kg/s * 52.5 MJ/kg = 472.5 MW; Q_lhv = 9.0 * 47.4 = 426.6 MW;
    # net = 180 - 9 = 171 MW; F = 9.0 * 1.04 * 47.4 MJ/kg = 443.664 MW.
    assert out["gross_power_w"] == 180e6
    assert out["net_power_w"] == pytest.approx(171e6, rel=1e-15)
    assert out["fuel_heat_input_hhv_w"] == pytest.approx(472.5e6, rel=1e-15)
    assert out["fuel_heat_input_lhv_w"] == pytest.approx(426.6e6, rel=1e-15)
    # Heat rate: 3.6e6 J/kWh * 472.5 / 180 = 9.45e6 J/kWh (gross),
    # 3.6e6 * 472.5 / 171 = 9.947368...e6 J/kWh (net); LHV: 8.532e6 and 8.98105...e6.
    assert out["gross_heat_rate_j_per_kwh"] == pytest.approx(9.45e6, rel=1e-14)
    assert out["net_heat_rate_j_per_kwh"] == pytest.approx(9.9473684210526e6, rel=1e-12)
    assert out["gross_heat_rate_lhv_j_per_kwh"] == pytest.approx(8.532e6, rel=1e-14)
    assert out["net_heat_rate_lhv_j_per_kwh"] == pytest.approx(8.9810526315789e6, rel=1e-12)
    # eta_1 = 171 / 472.5 = 0.3619047...; LHV 171 / 426.6 = 0.4008438...
    assert out["eta_1"] == pytest.approx(0.36190476190476, rel=1e-12)
    assert out["eta_1_lhv"] == pytest.approx(0.40084388185654, rel=1e-12)
    # Heat rate and efficiency are reciprocal through 3.6e6 J/kWh (definition).
    assert out["net_heat_rate_j_per_kwh"] * out["eta_1"] == pytest.approx(3.6e6, rel=1e-14)
    # eta_2 = 171 / 443.664 = 0.3854268094...; exergy destroyed and lost = 272.664 MW.
    assert out["fuel_exergy_w"] == pytest.approx(443.664e6, rel=1e-14)
    assert out["eta_2"] == pytest.approx(0.38542680947744, rel=1e-12)
    assert out["exergy_destroyed_and_lost_w"] == pytest.approx(272.664e6, rel=1e-12)
    # Entropy balance by hand: (472.5 - 171) MW / 298.15 K + 9.0 * (49.296 - 52.5) MJ/kg
    # / 298.15 K = (301.5 - 28.836) MW / 298.15 K = 914.519...e3 W/K.
    assert out["sgen_w_per_k"] == pytest.approx(272.664e6 / 298.15, rel=1e-12)
    assert out["lost_work_w"] == pytest.approx(272.664e6, rel=1e-12)
    # Carnot between the hottest steam (813.15 K, main steam) and 298.15 K.
    assert out["carnot_limit"] == pytest.approx(1 - 298.15 / 813.15, rel=1e-14)
    assert int(out["flags"]) == Flag.NONE


def test_claimed_efficiency_above_carnot_is_flagged():
    # A unit claiming eta_1 = 0.362 with its hottest steam at 400 K (127 degC): Carnot
    # allows only 1 - 298.15/400 = 0.2546. Second law and first law are otherwise fine.
    row = dict(UNIT, main_steam_temperature=400.0, reheat_temperature=390.0)
    out = _run(row).iloc[0]
    assert out["carnot_limit"] == pytest.approx(1 - 298.15 / 400.0, rel=1e-14)
    assert Flag(int(out["flags"])) == Flag.ABOVE_CARNOT


def test_hottest_bound_steam_temperature_is_the_hot_reservoir():
    row = dict(UNIT, main_steam_temperature=800.0, reheat_temperature=840.0)
    out = _run(row, params={"hot_reservoir_temperature_k": 500.0}).iloc[0]
    assert out["carnot_limit"] == pytest.approx(1 - 298.15 / 840.0, rel=1e-14)


def test_configured_hot_reservoir_used_only_without_steam_temperatures():
    row = {k: v for k, v in UNIT.items() if not k.endswith("temperature")}
    unset = _run(row).iloc[0]
    configured = _run(row, params={"hot_reservoir_temperature_k": 500.0}).iloc[0]
    assert np.isnan(unset["carnot_limit"])
    assert int(unset["flags"]) == Flag.NONE  # no limit known, nothing to flag against
    assert configured["carnot_limit"] == pytest.approx(1 - 298.15 / 500.0, rel=1e-14)
    # eta_1 0.362 < 0.4037: within the limit.
    assert int(configured["flags"]) == Flag.NONE


def test_efficiency_above_one_is_flagged_with_the_second_law_violations():
    # Fuel meter reads a tenth of the truth: eta_1 = 171 / 47.25 = 3.62 > 1 (first law),
    # above Carnot, and net power above the fuel exergy (Sgen < 0).
    out = _run(dict(UNIT, fuel_mass_flow=0.9)).iloc[0]
    assert out["eta_1"] == pytest.approx(171 / 47.25, rel=1e-12)
    assert out["sgen_w_per_k"] < 0
    assert Flag(int(out["flags"])) == (
        Flag.EFFICIENCY_ABOVE_ONE | Flag.ABOVE_CARNOT | Flag.NEGATIVE_ENTROPY_GENERATION
    )


def test_nan_row_among_good_rows_is_nan_and_flagged_alone():
    rows = [dict(UNIT), dict(UNIT, gross_power=np.nan), dict(UNIT)]
    out = _run(rows)
    single = _run(UNIT).iloc[0]
    assert out["flags"].tolist() == [0, int(Flag.INPUT_OUT_OF_RANGE), 0]
    assert out.drop(columns="flags").iloc[1].isna().all()
    for i in (0, 2):
        pd.testing.assert_series_equal(out.iloc[i], single, check_names=False)


@pytest.mark.parametrize(
    "column, value",
    [
        ("auxiliary_power", np.nan),
        ("fuel_mass_flow", -1.0),
        ("reheat_temperature", np.nan),
        ("main_steam_temperature", 250.0),  # below 273.15 K: not a steam temperature in K
        ("main_steam_temperature", 290.0),  # hottest reservoir colder than T0
    ],
)
def test_bad_inputs_give_input_out_of_range(column, value):
    out = _run([dict(UNIT, **{column: value}), dict(UNIT)])
    assert out["flags"].tolist() == [int(Flag.INPUT_OUT_OF_RANGE), 0]


def test_auxiliary_fraction_used_when_auxiliary_power_not_bound():
    row = {k: v for k, v in UNIT.items() if k != "auxiliary_power"}
    out = _run(row, params={"auxiliary_fraction": 0.05}).iloc[0]
    assert out["net_power_w"] == pytest.approx(171e6, rel=1e-15)
    default = _run(row).iloc[0]  # default fraction 0: net = gross
    assert default["net_power_w"] == 180e6


def test_heat_rate_is_nan_when_not_generating():
    out = _run(dict(UNIT, gross_power=5e6, auxiliary_power=9e6)).iloc[0]
    assert np.isnan(out["net_heat_rate_j_per_kwh"])
    assert out["gross_heat_rate_j_per_kwh"] == pytest.approx(3.6e6 * 472.5 / 5, rel=1e-12)
    assert out["eta_1"] == pytest.approx(-4e6 / 472.5e6, rel=1e-12)
    assert int(out["flags"]) == Flag.NONE


def test_volume_flow_alternative():
    row = {k: v for k, v in UNIT.items() if k != "fuel_mass_flow"}
    row["fuel_volume_flow"] = 9.0 / 0.78
    out = _run(row).iloc[0]
    assert out["fuel_heat_input_hhv_w"] == pytest.approx(472.5e6, rel=1e-14)


def test_datetime_index_kept_and_columns_as_declared():
    index = pd.date_range("2026-03-01", periods=4, freq="min", tz="UTC")
    out = _run([UNIT] * 4, index=index)
    assert out.index.equals(index)
    assert list(out.columns) == [r.name for r in KIND.results] + ["flags"]
    assert out["flags"].dtype == np.int64


def test_docstring_example_runs():
    result = doctest.testmod(block_module)
    assert (result.failed, result.attempted) == (0, 8)


@settings(max_examples=80, deadline=None)
@given(
    gross=st.floats(1e6, 2e9),
    aux_fraction=st.floats(0.0, 0.15),
    t_hot=st.floats(450.0, 900.0),
    t0=st.floats(275.0, 313.0),
    share_of_carnot=st.floats(0.05, 0.95),
)
def test_property_balances_and_bounds(gross, aux_fraction, t_hot, t0, share_of_carnot):
    # A consistent unit: its eta_1 is a fraction of its own Carnot limit.
    carnot = 1 - t0 / t_hot
    net = gross * (1 - aux_fraction)
    fuel = net / (share_of_carnot * carnot * GAS.hhv_j_per_kg)
    row = {
        "gross_power": gross,
        "auxiliary_power": gross * aux_fraction,
        "fuel_mass_flow": fuel,
        "main_steam_temperature": t_hot,
    }
    out = _run(row, t0=t0).iloc[0]
    # Energy: all fuel energy not leaving as net power leaves as heat at T0; recover that
    # heat from the entropy balance and compare with the first-law difference.
    reaction_w = fuel * (GAS.chemical_exergy_j_per_kg - GAS.hhv_j_per_kg)
    heat_to_environment = t0 * out["sgen_w_per_k"] - reaction_w
    assert heat_to_environment == pytest.approx(fuel * GAS.hhv_j_per_kg - net, rel=1e-9)
    # Gouy-Stodola: exergy route (F - W) and entropy route (T0 Sgen).
    assert out["lost_work_w"] == pytest.approx(out["exergy_destroyed_and_lost_w"], rel=1e-9)
    assert out["eta_1"] == pytest.approx(share_of_carnot * carnot, rel=1e-12)
    assert 0.0 <= out["eta_2"] <= 1.0
    assert int(out["flags"]) == Flag.NONE
