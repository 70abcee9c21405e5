"""Heat-recovery steam generator (engine/units/hrsg.py).

Outside references:
- the ``iapws`` package (IAPWS-IF97 by a second implementation: ``IAPWS97``) for every
  water and steam state of the worked examples, including saturation at drum pressure;
- Cantera 3.2 with GRI-Mech 3.0 (``gri30.yaml``) for the gas: enthalpy, entropy with the
  mixing term, the gas temperature of an enthalpy (``HPX``), and the adiabatic duct
  burner; the flue-gas composition built here by an element balance;
- definitions written out in the test: pinch = gas temperature leaving the evaporator
  minus saturation temperature, approach = saturation minus economizer-outlet
  temperature (ASME PTC 4.4-2008 usage; from memory); effectiveness = heat over the
  heat of the gas cooled to the feedwater inlet temperature (Incropera et al., 6th ed.,
  Sec. 11.4; from memory); exergetic efficiency of a heat exchanger = cold-stream exergy
  gain over hot-stream exergy drop (Bejan, Tsatsaronis & Moran 1996, Ch. 3);
- the dry-air composition of the U.S. Standard Atmosphere 1976, Table 3 (from memory);
- Gouy-Stodola (Bejan et al. 1996, Eq. 3.24): T0 Sgen equals the exergy destroyed, two
  routes in the model, to 1e-9.
"""

from __future__ import annotations

import doctest
import math

import cantera as ct
import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from iapws import IAPWS97

import engine.units.hrsg as hrsg_module
from engine.catalogue import ModelContext, Role, UnitKind, get_kind
from engine.checks import Flag
from engine.deadstate import dead_state
from engine.fuels import FuelProperties
from engine.units.gas_turbine import ISO_HUMIDITY_RATIO
from engine.units.hrsg import KIND, hrsg_performance

FUEL_X = {"CH4": 0.935, "C2H6": 0.04, "C3H8": 0.01, "CO2": 0.005, "N2": 0.01}
ATOMS = {"CH4": (1, 4, 0, 0), "C2H6": (2, 6, 0, 0), "C3H8": (3, 8, 0, 0), "CO2": (1, 0, 2, 0)}
ATOMS["N2"] = (0, 0, 0, 2)
DRY_AIR = {"N2": 1 - 0.209476 - 0.00934 - 0.000314, "O2": 0.209476, "AR": 0.00934}
DRY_AIR["CO2"] = 0.000314
NATURAL_GAS = FuelProperties.from_gas("pipeline gas", {**FUEL_X})

T0, P0 = 288.15, 101_325.0
LOSS = 0.005  # the model's default casing loss fraction
_GRI30 = ct.Solution("gri30.yaml")


def _fuel_elements() -> tuple[float, float, float, float]:
    return tuple(sum(x * ATOMS[s][i] for s, x in FUEL_X.items()) for i in range(4))


def _flue_gas_moles(air_factor: float) -> dict[str, float]:
    """Moles per mole of fuel of its complete combustion with humid air (ISO humidity)."""
    g = _GRI30
    c, h, o, n = _fuel_elements()
    o_th = c + h / 4.0 - o / 2.0
    dry_air = air_factor * o_th / DRY_AIR["O2"]
    m_da = sum(x * g.molecular_weights[g.species_index(s)] for s, x in DRY_AIR.items()) / 1e3
    m_w = g.molecular_weights[g.species_index("H2O")] / 1e3
    moles = {s: dry_air * x for s, x in DRY_AIR.items()}
    moles["H2O"] = dry_air * ISO_HUMIDITY_RATIO * m_da / m_w + h / 2.0
    moles["CO2"] += c
    moles["N2"] += n / 2.0
    moles["O2"] -= o_th
    return moles


def _fractions(moles: dict[str, float]) -> dict[str, float]:
    total = sum(moles.values())
    return {s: v / total for s, v in moles.items()}


def _gas_h(x, t, p=P0) -> float:
    _GRI30.TPX = t, p, x
    return _GRI30.enthalpy_mass


def _gas_t(x, h, p=P0) -> float:
    _GRI30.HPX = h, p, x
    return _GRI30.T


def _water(p_pa: float, t_k: float) -> IAPWS97:
    return IAPWS97(P=p_pa / 1e6, T=t_k)


# --- the worked example: our own fictional single-pressure HRSG ------------------------
# Behind the fictional 40 MW-class gas turbine of test_gas_turbine.py: 114.3 kg/s of
# flue gas of the pipeline gas at air factor 2.9, 550 degC, 3 kPa above the 101.325 kPa
# ambient; one pressure level: feedwater 45 bar(a) and 105 degC, economizer outlet
# 245 degC, drum 42 bar(a), steam 40 bar(a) and 480 degC, 15.6 kg/s; casing loss 0.5 %
# of the gas enthalpy drop (the default). The stack temperature is what the gas
# balance then leaves.

AIR_FACTOR = 2.9
X_GAS = _fractions(_flue_gas_moles(AIR_FACTOR))
M_GAS, T_GAS_IN, P_GAS_IN = 114.3, 823.15, 104_325.0
P_FW, T_FW, P_DRUM, T_ECO, P_STEAM, T_STEAM, M_STEAM = (
    45e5,
    378.15,
    42e5,
    518.15,
    40e5,
    753.15,
    15.6,
)
FLUE = {"gas_excess_air": AIR_FACTOR - 1.0}
FLUE_TEXT = {"gas_composition": "flue_gas"}


def _worked_example() -> dict[str, float]:
    ex: dict[str, float] = {}
    fw, steam, eco = _water(P_FW, T_FW), _water(P_STEAM, T_STEAM), _water(P_DRUM, T_ECO)
    t_sat = IAPWS97(P=P_DRUM / 1e6, x=0.0).T
    q_w = M_STEAM * (steam.h - fw.h) * 1e3
    q_shev = M_STEAM * (steam.h - eco.h) * 1e3
    h_in = _gas_h(X_GAS, T_GAS_IN, P_GAS_IN)
    # Gas balance: the gas gives q / (1 - loss) for every q the water takes.
    t_out = _gas_t(X_GAS, h_in - q_w / (1.0 - LOSS) / M_GAS)
    t_evap = _gas_t(X_GAS, h_in - q_shev / (1.0 - LOSS) / M_GAS)
    ex.update(q_w=q_w, t_out=t_out, t_sat=t_sat, pinch=t_evap - t_sat, approach=t_sat - T_ECO)
    ex["max_heat"] = M_GAS * (h_in - _gas_h(X_GAS, T_FW))
    ex["available"] = M_GAS * (h_in - _gas_h(X_GAS, T0))
    ex["stack_loss"] = M_GAS * (_gas_h(X_GAS, t_out) - _gas_h(X_GAS, T0))
    # Exergy: water gain (IF97), gas drop and stack (gri30, entropy with mixing).
    ex["water_gain"] = M_STEAM * ((steam.h - fw.h) - T0 * (steam.s - fw.s)) * 1e3
    _GRI30.TPX = T_GAS_IN, P_GAS_IN, X_GAS
    s_in = _GRI30.entropy_mass
    _GRI30.TPX = t_out, P0, X_GAS
    h_o, s_o = _GRI30.enthalpy_mass, _GRI30.entropy_mass
    _GRI30.TPX = T0, P0, X_GAS
    h_0, s_0 = _GRI30.enthalpy_mass, _GRI30.entropy_mass
    ex["gas_drop"] = M_GAS * ((h_in - h_o) - T0 * (s_in - s_o))
    ex["gas_in_exergy"] = M_GAS * ((h_in - h_0) - T0 * (s_in - s_0))
    ex["stack_exergy"] = M_GAS * ((h_o - h_0) - T0 * (s_o - s_0))
    return ex


EXAMPLE = _worked_example()


def _row(**changes) -> dict[str, float]:
    row = {
        "gas_in_temperature": T_GAS_IN,
        "gas_out_temperature": EXAMPLE["t_out"],
        "gas_flow": M_GAS,
        "gas_in_pressure": P_GAS_IN,
        "level1_feedwater_pressure": P_FW,
        "level1_feedwater_temperature": T_FW,
        "level1_steam_flow": M_STEAM,
        "level1_steam_pressure": P_STEAM,
        "level1_steam_temperature": T_STEAM,
        "level1_drum_pressure": P_DRUM,
        "level1_economizer_out_temperature": T_ECO,
    }
    row.update(changes)
    return {k: v for k, v in row.items() if v is not None}


def _run(rows, params=None, text=None, fuel=NATURAL_GAS, t0=T0, p0=P0, index=None):
    rows = [rows] if isinstance(rows, dict) else rows
    context = ModelContext(dead_state(t0, p0), fuel, text if text is not None else FLUE_TEXT)
    params = FLUE if params is None else params
    return hrsg_performance(pd.DataFrame(rows, index=index), params, context)


@pytest.fixture(scope="module")
def worked() -> pd.Series:
    return _run(_row()).iloc[0]


def test_scenario_is_a_sensible_one():
    # The hand calculation's figures, for the reader: stack ~186 degC, pinch ~11.5 K.
    assert EXAMPLE["t_out"] - 273.15 == pytest.approx(186.2, abs=0.1)
    assert EXAMPLE["pinch"] == pytest.approx(11.5, abs=0.1)
    assert EXAMPLE["approach"] == pytest.approx(8.27, abs=0.01)


def test_heat_recovered_and_energy_balance(worked):
    assert worked["heat_recovered_w"] == pytest.approx(EXAMPLE["q_w"], rel=1e-6)
    assert worked["level1_heat_w"] == worked["heat_recovered_w"]
    # gri30 and NASA TM-4513 enthalpy drops of the gas agree to ~2e-4.
    assert abs(worked["energy_balance_error"]) < 5e-4
    assert worked["heat_loss_w"] == pytest.approx(LOSS / (1 - LOSS) * EXAMPLE["q_w"], rel=0.1)
    assert worked["mass_balance_error"] == 0.0
    assert worked["flags"] == 0


def test_gas_flow_from_the_heat_balance():
    out = _run(_row(gas_flow=None)).iloc[0]
    assert out["gas_flow_kg_per_s"] == pytest.approx(M_GAS, rel=5e-4)
    assert out["energy_balance_error"] == 0.0
    assert out["heat_loss_w"] == pytest.approx(LOSS / (1 - LOSS) * EXAMPLE["q_w"], rel=1e-9)


def test_pinch_and_approach_by_hand(worked):
    # 0.2 K covers the two gas property sets at ~530 K and the gas balance's 2e-4.
    assert worked["level1_pinch_k"] == pytest.approx(EXAMPLE["pinch"], abs=0.2)
    assert worked["level1_approach_k"] == pytest.approx(EXAMPLE["approach"], abs=1e-6)
    assert worked["level1_evaporator_gas_out_temperature_k"] == pytest.approx(
        EXAMPLE["t_sat"] + EXAMPLE["pinch"], abs=0.2
    )
    for k in (2, 3, 4):
        assert math.isnan(worked[f"level{k}_pinch_k"])
        assert math.isnan(worked[f"level{k}_heat_w"])


def test_effectiveness_and_first_law(worked):
    assert worked["max_heat_recoverable_w"] == pytest.approx(EXAMPLE["max_heat"], rel=1e-3)
    assert worked["effectiveness"] == pytest.approx(EXAMPLE["q_w"] / EXAMPLE["max_heat"], rel=1e-3)
    assert worked["heat_available_w"] == pytest.approx(EXAMPLE["available"], rel=1e-3)
    assert worked["eta_1"] == pytest.approx(EXAMPLE["q_w"] / EXAMPLE["available"], rel=1e-3)
    assert worked["stack_loss_w"] == pytest.approx(EXAMPLE["stack_loss"], rel=2e-3)
    # Energy: available = recovered + stack + casing.
    total = worked["heat_recovered_w"] + worked["stack_loss_w"] + worked["heat_loss_w"]
    assert total == pytest.approx(worked["heat_available_w"], rel=1e-12)


def test_second_law(worked):
    assert worked["water_exergy_gain_w"] == pytest.approx(EXAMPLE["water_gain"], rel=1e-5)
    assert worked["gas_exergy_in_w"] == pytest.approx(EXAMPLE["gas_in_exergy"], rel=1e-3)
    assert worked["exergy_in_w"] == worked["gas_exergy_in_w"]
    assert worked["eta_2"] == pytest.approx(EXAMPLE["water_gain"] / EXAMPLE["gas_drop"], rel=2e-3)
    assert worked["exergy_recovery_ratio"] == pytest.approx(
        EXAMPLE["water_gain"] / EXAMPLE["gas_in_exergy"], rel=2e-3
    )
    # Unfired: the stack gas leaves with the inlet gas's composition, so what is lost is
    # its thermomechanical exergy.
    assert worked["exergy_lost_stack_w"] == pytest.approx(EXAMPLE["stack_exergy"], rel=2e-3)
    assert worked["exergy_destroyed_duct_burner_w"] == 0.0
    assert worked["lost_work_w"] == pytest.approx(
        worked["exergy_destroyed_heat_transfer_w"], rel=1e-9
    )
    account = (
        worked["water_exergy_gain_w"]
        + worked["exergy_destroyed_heat_transfer_w"]
        + worked["exergy_lost_stack_w"]
    )
    assert account == pytest.approx(worked["exergy_in_w"], rel=1e-12)
    assert worked["exergy_destroyed_and_lost_w"] == pytest.approx(
        worked["exergy_in_w"] - worked["water_exergy_gain_w"], rel=1e-12
    )


# --- duct firing ---------------------------------------------------------------------


def _fired_by_hand(m_g, t_in, m_df, t_out) -> dict[str, float]:
    """gri30: the fired gas by an element balance, its temperature and enthalpy drop."""
    g = _GRI30
    g.TPX = T0, 101_325.0, FUEL_X
    h_df, m_fuel_molar = g.enthalpy_mass, g.mean_molecular_weight / 1e3
    gas = _flue_gas_moles(AIR_FACTOR)
    g.TPX = t_in, P_GAS_IN, _fractions(gas)
    n_gas = m_g / (g.mean_molecular_weight / 1e3) / sum(gas.values())  # per mole-of-fuel set
    h_in = m_g * g.enthalpy_mass
    fired = {s: n_gas * v for s, v in gas.items()}
    c, h, o, n = _fuel_elements()
    n_df = m_df / m_fuel_molar
    fired["CO2"] += n_df * c
    fired["H2O"] += n_df * h / 2.0
    fired["N2"] += n_df * n / 2.0
    fired["O2"] -= n_df * (c + h / 4.0 - o / 2.0)
    x = _fractions(fired)
    m_fired = m_g + m_df
    t_fired = _gas_t(x, (h_in + m_df * h_df) / m_fired, P_GAS_IN)
    drop = h_in + m_df * h_df - m_fired * _gas_h(x, t_out)
    return {"t_fired": t_fired, "drop": drop}


@settings(max_examples=50, deadline=None)
@given(
    m_g=st.floats(60.0, 200.0),
    t_in=st.floats(780.0, 900.0),
    duct_share=st.floats(0.0, 0.3),
    t_out=st.floats(430.0, 480.0),
    m_s=st.floats(5.0, 30.0),
    t0=st.floats(274.15, 313.15),  # liquid water at the dead state
    bound=st.booleans(),
)
def test_duct_fired_balances(m_g, t_in, duct_share, t_out, m_s, t0, bound):
    # Duct fuel up to ~30 % of the water's duty (about 3 MJ/kg of steam, 48 MJ/kg LHV),
    # so that the heat balance of an unbound gas flow leaves a positive flow.
    m_df = duct_share * m_s * 3.0e6 / 48e6
    row = _row(
        gas_flow=m_g if bound else None,
        gas_in_temperature=t_in,
        gas_out_temperature=t_out,
        level1_steam_flow=m_s,
        duct_fuel_mass_flow=m_df,
    )
    out = _run(row, t0=t0).iloc[0]
    assert out["lost_work_w"] == pytest.approx(
        out["exergy_destroyed_duct_burner_w"] + out["exergy_destroyed_heat_transfer_w"],
        rel=1e-9,
    )
    # The account closes: exergy in = water gain + destroyed + stack.
    parts = (
        out["water_exergy_gain_w"]
        + out["exergy_destroyed_duct_burner_w"]
        + out["exergy_destroyed_heat_transfer_w"]
        + out["exergy_lost_stack_w"]
    )
    assert parts == pytest.approx(out["exergy_in_w"], rel=1e-9)
    m_gas = out["gas_flow_kg_per_s"]
    by_hand = _fired_by_hand(m_gas, t_in, m_df, t_out)
    # Energy closes with gri30: the fired gas's drop = water heat + casing loss.
    assert by_hand["drop"] == pytest.approx(out["heat_recovered_w"] + out["heat_loss_w"], rel=1e-3)
    assert out["fired_temperature_k"] == pytest.approx(by_hand["t_fired"], abs=1.0)
    assert out["duct_fuel_heat_input_lhv_w"] == pytest.approx(
        m_df * NATURAL_GAS.lhv_j_per_kg, rel=1e-12
    )
    # A burner adds exergy destruction (combustion is irreversible) and never a negative.
    round_off = 1e-12 * out["exergy_in_w"]
    assert out["exergy_destroyed_duct_burner_w"] >= (1.0 if m_df > 1e-3 else -round_off)
    # eta_2 = G / (G + T0 Sgen): above 1 exactly when the entropy balance goes negative.
    assert (out["eta_2"] <= 1) == (out["sgen_w_per_k"] >= 0)
    if not bound:
        # A gas flow from the balance is consistent by construction: nothing to flag.
        assert out["flags"] == 0
        assert 0 < out["eta_2"] <= 1
        assert out["sgen_w_per_k"] > 0


def test_burner_off_is_the_unfired_hrsg():
    off = _run(_row(duct_fuel_mass_flow=0.0)).iloc[0]
    unfired = _run(_row()).iloc[0]
    assert off["flags"] == 0
    for name in ("heat_recovered_w", "eta_2", "effectiveness", "level1_pinch_k"):
        assert off[name] == pytest.approx(unfired[name], rel=1e-12)
    assert off["duct_fuel_exergy_w"] == 0.0


def test_duct_firing_beyond_the_oxygen_is_out_of_range():
    # ~114 kg/s at 14 % O2 hold ~0.53 kmol/s of O2; 20 kg/s of gas fuel needs ~2.4.
    fired = [_row(duct_fuel_mass_flow=m, gas_flow=None) for m in (0.5, 20.0)]
    out = _run(fired)
    assert out["flags"].tolist() == [0, Flag.INPUT_OUT_OF_RANGE]
    assert out.iloc[1].drop("flags").isna().all()


# --- several levels, a reheater, saturated steam -------------------------------------


def test_three_levels_with_a_reheater():
    # Our own scenario: HP 100 bar 540 degC from 150 degC water, 20 kg/s; a reheater
    # 30 -> 28 bar, 350 -> 540 degC, 19 kg/s; LP 5 bar saturated steam from 60 degC
    # water, 10 kg/s. Gas (humid air) at 600 degC to a 140 degC stack, its flow from the
    # balance (so the gas gives q / (1 - loss) for every q the water takes).
    t_sat_lp = IAPWS97(P=0.5, x=1.0).T
    row = {
        "gas_in_temperature": 873.15,
        "gas_out_temperature": 413.15,
        "level1_feedwater_pressure": 110e5,
        "level1_feedwater_temperature": 423.15,
        "level1_steam_flow": 20.0,
        "level1_steam_pressure": 100e5,
        "level1_steam_temperature": 813.15,
        "level2_feedwater_pressure": 30e5,
        "level2_feedwater_temperature": 623.15,
        "level2_steam_flow": 19.0,
        "level2_steam_pressure": 28e5,
        "level2_steam_temperature": 813.15,
        "level3_feedwater_pressure": 6e5,
        "level3_feedwater_temperature": 333.15,
        "level3_feedwater_flow": 10.1,
        "level3_steam_flow": 10.0,
        "level3_steam_pressure": 5e5,
        "level3_steam_temperature": t_sat_lp - 1.0,  # reads a kelvin low: saturated
    }
    out = _run(row, params={}, text={}).iloc[0]
    h = {
        1: 20.0 * (_water(100e5, 813.15).h - _water(110e5, 423.15).h),
        2: 19.0 * (_water(28e5, 813.15).h - _water(30e5, 623.15).h),
        # 0.1 kg/s of the LP feedwater leaves unmetered: water at the dead state.
        3: 10.0 * IAPWS97(P=0.5, x=1.0).h - 10.1 * _water(6e5, 333.15).h + 0.1 * _water(P0, T0).h,
    }
    for k, kj in h.items():
        assert out[f"level{k}_heat_w"] == pytest.approx(kj * 1e3, rel=1e-5)
    assert out["heat_recovered_w"] == pytest.approx(sum(h.values()) * 1e3, rel=1e-5)
    assert out["mass_balance_error"] == pytest.approx(0.1 / 49.1, rel=1e-12)
    # The reheater has no evaporator.
    assert math.isnan(out["level2_pinch_k"]) and math.isnan(out["level2_approach_k"])
    # The LP evaporator's gas outlet by hand: after HP (all of it), the reheater and the
    # LP superheater+evaporator (zero approach assumed: economizer outlet not bound),
    # humid air at the ISO humidity ratio, gri30.
    m_da = 28.965e-3  # U.S. Standard Atmosphere 1976 (from memory)
    x_w = (ISO_HUMIDITY_RATIO / 18.015e-3) / (ISO_HUMIDITY_RATIO / 18.015e-3 + 1 / m_da)
    air = {s: x * (1 - x_w) for s, x in DRY_AIR.items()}
    air["H2O"] = x_w
    m_g = out["gas_flow_kg_per_s"]
    q_lp_shev = 10.0 * (IAPWS97(P=0.5, x=1.0).h - IAPWS97(P=0.5, x=0.0).h) * 1e3
    upstream = (h[1] + h[2]) * 1e3 + q_lp_shev
    t_gas = _gas_t(air, _gas_h(air, 873.15) - upstream / (1 - LOSS) / m_g)
    assert out["level3_evaporator_gas_out_temperature_k"] == pytest.approx(t_gas, abs=0.2)
    assert out["level3_pinch_k"] == pytest.approx(t_gas - t_sat_lp, abs=0.2)
    assert math.isnan(out["level3_approach_k"])
    assert out["lost_work_w"] == pytest.approx(out["exergy_destroyed_heat_transfer_w"], rel=1e-9)
    assert out["level1_pinch_k"] > 0 and out["level3_pinch_k"] > 0
    assert out["flags"] == 0  # a 0.2 % mass imbalance is inside the 2 % tolerance


# --- bad rows, flags, configuration ---------------------------------------------------


def test_bad_rows_are_nan_and_flagged_without_touching_the_others():
    rows = [
        _row(),
        _row(gas_in_temperature=np.nan),
        _row(level1_steam_pressure=-1.0),
        _row(level1_steam_flow=-2.0),
    ]
    index = pd.date_range("2031-06-01", periods=4, freq="min")
    out = _run(rows, index=index)
    assert out.index.equals(index)
    assert out["flags"].tolist() == [0] + [Flag.INPUT_OUT_OF_RANGE] * 3
    for i in (1, 2, 3):
        assert out.iloc[i].drop("flags").isna().all()
    assert out["heat_recovered_w"].iloc[0] == pytest.approx(EXAMPLE["q_w"], rel=1e-6)


def test_impossible_readings_are_flagged():
    # A stack colder than the feedwater: more heat than the gas could give the water.
    cold_stack = _run(_row(gas_out_temperature=T_FW - 5.0, gas_flow=None)).iloc[0]
    assert cold_stack["effectiveness"] > 1
    assert int(cold_stack["flags"]) & Flag.ABOVE_CARNOT == Flag.ABOVE_CARNOT
    # The gas flow meter reads 10 % low: the water took more than the gas gave.
    low = _run(_row(gas_flow=0.9 * M_GAS)).iloc[0]
    # By hand: the gas drop is 0.9 of what the water and the 0.5 % loss need, so
    # error = (0.9 dH - Q - 0.005 * 0.9 dH) / (0.9 dH) = (1 - 0.005) (1 - 1 / 0.9).
    assert low["energy_balance_error"] == pytest.approx((1 - LOSS) * (1 - 1 / 0.9), abs=5e-4)
    assert low["flags"] == Flag.ENERGY_BALANCE_OPEN
    # Feedwater metered 5 % above the steam.
    leak = _run(_row(level1_feedwater_flow=1.05 * M_STEAM)).iloc[0]
    assert leak["mass_balance_error"] == pytest.approx(0.05 / 1.05, rel=1e-12)
    assert int(leak["flags"]) & Flag.ENERGY_BALANCE_OPEN == Flag.ENERGY_BALANCE_OPEN


def test_air_composition_is_the_default_and_needs_no_fuel():
    air = _run(_row(gas_flow=None), params={}, text={}, fuel=None).iloc[0]
    flue = _run(_row(gas_flow=None)).iloc[0]
    # Humid air holds less heat per kg and kelvin than the flue gas (no CO2, less H2O):
    # the same duty between the same temperatures needs more of it, a few percent.
    assert air["flags"] == 0
    assert air["heat_recovered_w"] == flue["heat_recovered_w"]
    ratio = air["gas_flow_kg_per_s"] / flue["gas_flow_kg_per_s"]
    assert 1.0 < ratio < 1.05


def test_measured_o2_sets_the_excess_air():
    # The flue gas's dry O2 at the worked example's air factor, from the element balance.
    moles = _flue_gas_moles(AIR_FACTOR)
    o2_dry = moles["O2"] / (sum(moles.values()) - moles["H2O"])
    by_o2 = _run(_row(gas_in_o2=o2_dry), params={}).iloc[0]
    by_parameter = _run(_row()).iloc[0]
    assert by_o2["heat_available_w"] == pytest.approx(by_parameter["heat_available_w"], rel=1e-6)


def test_configuration_errors():
    with pytest.raises(ValueError, match="gas_composition 'flue_gas' needs the unit's fuel"):
        _run(_row(), fuel=None)
    with pytest.raises(ValueError, match=r"duct firing \(duct_fuel_mass_flow\) needs the unit's"):
        _run(_row(duct_fuel_mass_flow=0.2), params={}, text={}, fuel=None)
    no_levels = {k: v for k, v in _row().items() if not k.startswith("level")}
    with pytest.raises(ValueError, match="a hrsg needs at least one pressure level"):
        _run(no_levels)


def test_catalogue_entry_and_the_conditional_fuel():
    kind = get_kind("hrsg")
    assert kind is KIND
    assert not kind.needs_fuel
    assert kind.fuel_roles == ("duct_fuel_mass_flow", "duct_fuel_volume_flow")
    roles = list(_row())
    assert kind.validate(roles, {}, has_fuel=False) == []
    fired = [*roles, "duct_fuel_volume_flow"]
    assert [str(p) for p in kind.validate(fired, {}, has_fuel=False)] == [
        "fuel: 'duct_fuel_volume_flow' bound: the hrsg then burns a fuel; name one"
    ]
    assert kind.validate(fired, {}, has_fuel=True) == []
    no_levels = [r for r in roles if not r.startswith("level")]
    assert [str(p) for p in kind.validate(no_levels, {}, has_fuel=False)] == [
        "ports 'level': at least 1 required, 0 bound"
    ]
    # The catalogue counts ports, it does not bound their numbers; the model does.
    five = {
        **_row(),
        **{k.replace("level1", "level5"): v for k, v in _row().items() if "level1" in k},
    }
    assert kind.validate(list(five), {}, has_fuel=False) == []
    with pytest.raises(ValueError, match="levels are numbered 1 to 4; got level5"):
        _run(five)
    out = _run(_row())
    assert list(out.columns) == [c.name for c in KIND.results] + ["flags"]
    assert out["flags"].dtype == np.int64


def test_a_fuel_role_must_be_a_role_of_the_kind():
    with pytest.raises(ValueError, match="x: fuel role 'burner_flow' is not a role of the kind"):
        UnitKind(
            name="x",
            title="X",
            roles=(Role("a", "K"),),
            parameters=(),
            results=(),
            model=hrsg_performance,
            fuel_roles=("burner_flow",),
        )


def test_docstring_examples():
    result = doctest.testmod(hrsg_module)
    assert result.attempted == 7
    assert result.failed == 0


def test_a_dead_state_per_row_is_the_same_as_row_by_row():
    # The pipeline's ambient tag gives one T0 per interval.
    t0 = np.array([278.15, 288.15, 298.15])
    rows = pd.DataFrame([_row(duct_fuel_mass_flow=0.2, gas_flow=None)] * 3)
    context = ModelContext(dead_state(t0, np.full(3, P0)), NATURAL_GAS, FLUE_TEXT)
    together = hrsg_performance(rows, FLUE, context)
    for i, t in enumerate(t0):
        alone = _run(_row(duct_fuel_mass_flow=0.2, gas_flow=None), t0=float(t)).iloc[0]
        pd.testing.assert_series_equal(together.iloc[i], alone, check_names=False, rtol=1e-12)
    # The water heat is taken relative to the dead state, which cancels (round-off).
    heat = together["heat_recovered_w"]
    assert heat.max() == pytest.approx(heat.min(), rel=1e-12)
