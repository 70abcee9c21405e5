"""Forward models (engine/simulate.py): from an operating state to instrument readings.

Outside references:
- the `iapws` package (PyPI, IAPWS97 class: an independent implementation of IAPWS-IF97)
  for every water/steam property of the worked examples (enthalpies, the isentropic end
  points of the expansion, saturation temperatures);
- the engine's own inverse routes, which are different code: the boiler's input-output
  and heat-loss methods (ASME PTC 4-2013 structure) and the turbine's section
  efficiencies and wet-port closure must give back exactly the state the forward model
  was given (a round trip that closes or fails);
- balances that must close: the turbine's energy balance on the generator output.

Tolerances: CoolProp's IF97 backend and `iapws` agree to ~1e-14 relative in regions 1 and
2 (see tests/engine/test_boiler.py); the (p, s) and (p, h) inverse routes of
engine.steam are consistent to ~1e-9 relative, so hand calculations with `iapws` are
checked at 1e-7 relative and round trips through the engine at 1e-7 absolute on an
efficiency.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from iapws import IAPWS97

from engine import heatloss
from engine.catalogue import ModelContext
from engine.deadstate import dead_state
from engine.fuels import FuelProperties
from engine.simulate import boiler_forward, turbine_forward
from engine.units.boiler import boiler_direct
from engine.units.steam_turbine import steam_turbine

# A fictional natural gas of our own (mole fractions of the usual size, no supplier's).
GAS = FuelProperties.from_gas("fictional gas", {"CH4": 0.94, "C2H6": 0.04, "N2": 0.02})
MPA = 1e6


# --- boiler --------------------------------------------------------------------------

# Our own scenario: 12 kg/s of steam at 6.3 MPa / 480 degC from feedwater at 7.5 MPa /
# 145 degC, 1.5 % blowdown from a 6.6 MPa drum, flue gas leaving at 150 degC with 3 %
# O2 (dry), air at 15 degC, 0.6 % surface loss.
BOILER_STATE = {
    "steam_flow_kg_per_s": 12.0,
    "steam_pressure_pa": 6.3 * MPA,
    "steam_temperature_k": 753.15,
    "feedwater_pressure_pa": 7.5 * MPA,
    "feedwater_temperature_k": 418.15,
    "flue_gas_o2": 0.03,
    "flue_gas_temperature_k": 423.15,
    "air_temperature_k": 288.15,
}


def _boiler(**overrides):
    state = {**BOILER_STATE, **overrides}
    return boiler_forward(
        *state.values(),
        GAS,
        blowdown_fraction=0.015,
        drum_pressure_pa=6.6 * MPA,
        surface_loss_fraction=0.006,
    )


def test_boiler_forward_against_iapws_hand_calculation():
    out = _boiler()
    # PTC 4 output per stream with iapws enthalpies (kJ/kg -> J/kg).
    h_ms = IAPWS97(P=6.3, T=753.15).h * 1e3
    h_fw = IAPWS97(P=7.5, T=418.15).h * 1e3
    h_bd = IAPWS97(P=6.6, x=0.0).h * 1e3
    m_ms, m_bd = 12.0, 0.015 * 12.0
    q_abs = m_ms * h_ms + m_bd * h_bd - (m_ms + m_bd) * h_fw
    eta = heatloss.heat_loss_efficiency(GAS, 0.03, 423.15, 288.15, surface_loss_fraction=0.006)[
        "eta_1_indirect"
    ].iloc[0]
    assert out["heat_absorbed_w"].iloc[0] == pytest.approx(q_abs, rel=1e-7)
    assert out["eta_1"].iloc[0] == pytest.approx(eta, rel=1e-12)
    assert out["fuel_mass_flow_kg_per_s"].iloc[0] == pytest.approx(
        q_abs / (eta * GAS.hhv_j_per_kg), rel=1e-7
    )
    assert out["fuel_volume_flow_m3_per_s"].iloc[0] == pytest.approx(
        out["fuel_mass_flow_kg_per_s"].iloc[0] / GAS.density_kg_per_m3, rel=1e-12
    )
    assert out["feedwater_flow_kg_per_s"].iloc[0] == pytest.approx(12.18, rel=1e-12)
    assert out["blowdown_flow_kg_per_s"].iloc[0] == pytest.approx(0.18, rel=1e-12)
    # Sanity of the invented scenario: a gas boiler at 150 degC stack, HHV basis.
    assert 0.83 < out["eta_1"].iloc[0] < 0.86


def test_boiler_round_trip_through_both_engine_methods():
    """The boiler model fed the forward model's flows gives back its efficiency by the
    input-output method and by the heat-loss method, and the two agree."""
    out = _boiler()
    inputs = pd.DataFrame(
        {
            "fuel_mass_flow": out["fuel_mass_flow_kg_per_s"],
            "feedwater_flow": out["feedwater_flow_kg_per_s"],
            "feedwater_pressure": 7.5 * MPA,
            "feedwater_temperature": 418.15,
            "steam_flow": 12.0,
            "steam_pressure": 6.3 * MPA,
            "steam_temperature": 753.15,
            "blowdown_flow": out["blowdown_flow_kg_per_s"],
            "drum_pressure": 6.6 * MPA,
            "flue_gas_o2": 0.03,
            "flue_gas_temperature": 423.15,
            "combustion_air_temperature": 288.15,
        }
    )
    params = {
        "surface_loss_fraction": 0.006,
        "air_humidity_ratio": heatloss.STANDARD_HUMIDITY_RATIO,
    }
    result = boiler_direct(inputs, params, ModelContext(dead_state(288.15, 101_325.0), GAS))
    eta = out["eta_1"].iloc[0]
    assert result["eta_1"].iloc[0] == pytest.approx(eta, abs=1e-9)
    assert result["eta_1_indirect"].iloc[0] == pytest.approx(eta, abs=1e-12)
    assert result["direct_minus_indirect"].iloc[0] == pytest.approx(0.0, abs=1e-9)
    assert result["mass_balance_error"].iloc[0] == pytest.approx(0.0, abs=1e-15)
    assert int(result["flags"].iloc[0]) == 0


def test_boiler_rated_output_scales_the_surface_loss():
    # With rated_heat_output_w the loss is constant in watts: at half the rated heat the
    # fraction doubles (heatloss.surface_loss_fraction_at_load, common practice).
    full = _boiler()
    q = float(full["heat_absorbed_w"].iloc[0])
    half_load = boiler_forward(
        *BOILER_STATE.values(),
        GAS,
        blowdown_fraction=0.015,
        drum_pressure_pa=6.6 * MPA,
        surface_loss_fraction=0.006,
        rated_heat_output_w=2.0 * q,
    )
    assert float(full["eta_1"].iloc[0] - half_load["eta_1"].iloc[0]) == pytest.approx(
        0.006, abs=1e-12
    )


def test_boiler_fouling_raises_fuel_for_the_same_steam():
    # Common practice (from memory): about 1 % of efficiency per 20-25 K of stack
    # temperature for natural gas. The model's own figure must lie in that range.
    clean, fouled = _boiler(), _boiler(flue_gas_temperature_k=423.15 + 40.0)
    drop = float(clean["eta_1"].iloc[0] - fouled["eta_1"].iloc[0])
    assert 0.016 < drop < 0.02
    ratio = fouled["fuel_mass_flow_kg_per_s"].iloc[0] / clean["fuel_mass_flow_kg_per_s"].iloc[0]
    assert ratio == pytest.approx(clean["eta_1"].iloc[0] / fouled["eta_1"].iloc[0], rel=1e-12)


def test_boiler_types_index_and_nan_rows():
    index = pd.date_range("2026-03-01", periods=3, freq="5min", tz="UTC")
    flow = pd.Series([10.0, np.nan, 12.0], index=index)
    out = boiler_forward(flow, 6.3 * MPA, 753.15, 7.5 * MPA, 418.15, 0.03, 423.15, 288.15, GAS)
    assert out.index.equals(index)
    assert out["fuel_mass_flow_kg_per_s"].isna().tolist() == [False, True, False]
    scalar = boiler_forward(12.0, 6.3 * MPA, 753.15, 7.5 * MPA, 418.15, 0.03, 423.15, 288.15, GAS)
    assert scalar["fuel_mass_flow_kg_per_s"].iloc[0] == pytest.approx(
        out["fuel_mass_flow_kg_per_s"].iloc[2], rel=1e-12
    )


def test_boiler_needs_a_composition():
    by_heating_value = FuelProperties("no analysis", hhv_j_per_kg=50e6)
    with pytest.raises(ValueError, match="ultimate analysis"):
        boiler_forward(
            12.0, 6.3 * MPA, 753.15, 7.5 * MPA, 418.15, 0.03, 423.15, 288.15, by_heating_value
        )


# --- turbine -------------------------------------------------------------------------


# Our own scenario: an extraction-condensing set, 10 kg/s at 6 MPa / 480 degC, 4 kg/s
# extracted at 1.3 MPa, the rest condensing at 8 kPa; sections 0.80 and 0.82, generator
# 0.97.
def _turbine(**kw):
    args = {
        "inlet_flow_kg_per_s": 10.0,
        "inlet_pressure_pa": 6 * MPA,
        "inlet_temperature_k": 753.15,
        "port_pressures_pa": [1.3 * MPA],
        "port_flows_kg_per_s": [4.0],
        "exhaust_pressure_pa": 8e3,
        "section_efficiencies": [0.80, 0.82],
    }
    args.update(kw)
    return turbine_forward(**args, generator_efficiency=0.97)


def test_turbine_forward_against_iapws_expansion():
    out = _turbine()
    inlet = IAPWS97(P=6.0, T=753.15)
    h1s = IAPWS97(P=1.3, s=inlet.s).h
    h1 = inlet.h - 0.80 * (inlet.h - h1s)
    port = IAPWS97(P=1.3, h=h1)
    h2s = IAPWS97(P=0.008, s=port.s).h
    h2 = h1 - 0.82 * (h1 - h2s)
    exhaust = IAPWS97(P=0.008, h=h2)
    power = (10.0 * inlet.h - 4.0 * h1 - 6.0 * h2) * 1e3 * 0.97
    row = out.iloc[0]
    assert row["port1_enthalpy_j_per_kg"] == pytest.approx(h1 * 1e3, rel=1e-7)
    assert row["port1_temperature_k"] == pytest.approx(port.T, abs=1e-4)
    assert np.isnan(row["port1_quality"])  # superheated extraction
    assert row["exhaust_enthalpy_j_per_kg"] == pytest.approx(h2 * 1e3, rel=1e-7)
    assert row["exhaust_quality"] == pytest.approx(exhaust.x, abs=1e-7)
    # A wet port reads the saturation temperature.
    assert row["exhaust_temperature_k"] == pytest.approx(IAPWS97(P=0.008, x=0.0).T, abs=1e-4)
    assert row["exhaust_flow_kg_per_s"] == pytest.approx(6.0, rel=1e-15)
    assert row["generator_power_w"] == pytest.approx(power, rel=1e-7)
    assert row["shaft_power_w"] * 0.97 == pytest.approx(row["generator_power_w"], rel=1e-15)


def test_turbine_round_trip_through_the_engine():
    """The turbine model, fed the forward model's readings (wet exhaust unbound), gives
    back both section efficiencies; its energy closure recovers the exhaust enthalpy."""
    out = _turbine().iloc[0]
    inputs = pd.DataFrame(
        {
            "inlet_flow": [10.0],
            "inlet_pressure": [6 * MPA],
            "inlet_temperature": [753.15],
            "extraction1_flow": [4.0],
            "extraction1_pressure": [1.3 * MPA],
            "extraction1_temperature": [out["port1_temperature_k"]],
            "exhaust_pressure": [8e3],
            "exhaust_temperature": [out["exhaust_temperature_k"]],
            "generator_power": [out["generator_power_w"]],
        }
    )
    result = steam_turbine(
        inputs, {"generator_efficiency": 0.97, "min_superheat_k": 3.0}, ModelContext(dead_state())
    ).iloc[0]
    assert result["section1_isentropic_efficiency"] == pytest.approx(0.80, abs=1e-7)
    assert result["section2_isentropic_efficiency"] == pytest.approx(0.82, abs=1e-7)
    assert result["exhaust_enthalpy_j_per_kg"] == pytest.approx(
        out["exhaust_enthalpy_j_per_kg"], rel=1e-9
    )
    assert int(result["flags"]) == 0


def test_back_pressure_turbine_closes_its_energy_balance():
    # One section, superheated exhaust: the engine's over-determined energy balance
    # (every enthalpy measured) must close on the forward model's output.
    out = turbine_forward(
        8.0, 4.2 * MPA, 700.0, [], [], 0.55 * MPA, [0.76], generator_efficiency=0.96
    )
    row = out.iloc[0]
    inputs = pd.DataFrame(
        {
            "inlet_flow": [8.0],
            "inlet_pressure": [4.2 * MPA],
            "inlet_temperature": [700.0],
            "exhaust_pressure": [0.55 * MPA],
            "exhaust_temperature": [row["exhaust_temperature_k"]],
            "generator_power": [row["generator_power_w"]],
        }
    )
    result = steam_turbine(inputs, {"generator_efficiency": 0.96}, ModelContext(dead_state())).iloc[
        0
    ]
    assert result["energy_balance_error"] == pytest.approx(0.0, abs=1e-8)
    assert result["section1_isentropic_efficiency"] == pytest.approx(0.76, abs=1e-7)


def test_turbine_vectorised_series_and_nan():
    index = pd.RangeIndex(3)
    eta = pd.Series([0.80, np.nan, 0.75], index=index)
    out = turbine_forward(8.0, 4.2 * MPA, 700.0, [], [], 0.55 * MPA, [eta])
    assert out.index.equals(index)
    assert out["generator_power_w"].isna().tolist() == [False, True, False]
    lower = out["generator_power_w"].iloc[2] / out["generator_power_w"].iloc[0]
    assert lower == pytest.approx(0.75 / 0.80, rel=1e-12)  # W scales with eta_s here


def test_turbine_refuses_mismatched_sections():
    with pytest.raises(ValueError, match="3 section efficiencies for 1 ports; give 2"):
        _turbine(section_efficiencies=[0.8, 0.8, 0.8])
    with pytest.raises(ValueError, match="1 port pressures but 2 port flows"):
        _turbine(port_flows_kg_per_s=[1.0, 2.0])


def test_turbine_negative_exhaust_flow_is_nan():
    out = _turbine(port_flows_kg_per_s=[12.0])
    assert np.isnan(out["exhaust_flow_kg_per_s"].iloc[0])
    assert np.isnan(out["generator_power_w"].iloc[0])
