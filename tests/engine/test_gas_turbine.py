"""Gas turbine (engine/units/gas_turbine.py).

Outside references:
- Cantera 3.2 with GRI-Mech 3.0 (``gri30.yaml``): an independent ideal-gas property set
  (its own species fits, formation-basis enthalpies, absolute entropies with the mixing
  term) for the worked example, rebuilt step by step here: humid air, the compressor,
  the fuel's LHV, the exhaust composition by an element balance written in the test,
  the turbine's energy balance, the mixed turbine inlet temperature, the exhaust energy
  and exergy;
- the ``iapws`` package (IAPWS-IF97 saturation pressure, ``_PSat_T``) and the ASHRAE
  humidity-ratio form W = (M_w / M_da) p_w / (p - p_w) (ASHRAE Handbook - Fundamentals
  2021, Ch. 1, Eq. 20; from memory) for the humidity of the air;
- CoolProp's humid-air functions ``HAPropsSI`` (real-gas mixture model of ASHRAE RP-1485)
  for the compressor's isentropic discharge state and enthalpy rise within 0.2 %;
- Szargut, Morris & Steward 1988, Appendix Table I (standard chemical exergies; values
  from memory) with the ideal mixing rule for the fuel exergy, written out here;
- the dry-air composition of the U.S. Standard Atmosphere 1976, Table 3 (O2 0.209476,
  Ar 0.00934, CO2 0.000314, N2 the rest; from memory);
- Gouy-Stodola (Bejan, Tsatsaronis & Moran 1996, Eq. 3.24): T0 Sgen equals the exergy
  destroyed, two routes in the model, to 1e-9;
- the ISO correction (ASME PTC 22-2014 multiplicative structure, ISO 2314:2009 reference
  conditions; from memory) recomputed by hand from the configured curves.
"""

from __future__ import annotations

import doctest
import math

import cantera as ct
import numpy as np
import pandas as pd
import pytest
from CoolProp.CoolProp import HAPropsSI
from hypothesis import given, settings
from hypothesis import strategies as st
from iapws.iapws97 import _PSat_T

import engine.units.gas_turbine as gas_turbine_module
from engine.catalogue import ModelContext, get_kind
from engine.checks import Flag
from engine.deadstate import dead_state
from engine.fuels import FuelProperties
from engine.units.gas_turbine import (
    ISO_HUMIDITY_RATIO,
    KIND,
    gas_turbine_performance,
)

# --- the worked example: our own fictional 40 MW-class unit ---------------------------
# Ambient at the ISO conditions (15 degC, 101.325 kPa, 60 %), 1 kPa lost in the inlet
# filter, pressure ratio 18, a compressor of isentropic efficiency 0.87, natural gas by
# composition at 25 degC, 2.30 kg/s of fuel and 112.0 kg/s of humid air, exhaust at
# 550 degC, generator efficiency 0.985 and 0.5 % of the LHV input lost as heat (the
# model's defaults). The generator output is what the energy balance then leaves.

FUEL_X = {"CH4": 0.935, "C2H6": 0.04, "C3H8": 0.01, "CO2": 0.005, "N2": 0.01}
# Atoms (C, H, O, N) per molecule, by hand from the formulas.
ATOMS = {"CH4": (1, 4, 0, 0), "C2H6": (2, 6, 0, 0), "C3H8": (3, 8, 0, 0), "CO2": (1, 0, 2, 0)}
ATOMS["N2"] = (0, 0, 0, 2)
DRY_AIR = {"N2": 1 - 0.209476 - 0.00934 - 0.000314, "O2": 0.209476, "AR": 0.00934}
DRY_AIR["CO2"] = 0.000314
# Szargut et al. 1988, Appendix Table I, standard chemical exergy [kJ/mol] (from memory).
SZARGUT_KJ_PER_MOL = {"CH4": 831.65, "C2H6": 1495.84, "C3H8": 2154.0, "CO2": 19.87, "N2": 0.72}

T_AMB, P_AMB, RH = 288.15, 101_325.0, 0.6
T1, P1 = 288.15, 100_325.0
P2 = 18.0 * P1
ETA_C = 0.87
T_FUEL = 298.15
T_EXHAUST = 823.15
M_FUEL, M_AIR = 2.30, 112.0
ETA_GEN, LOSS_FRACTION = 0.985, 0.005
T0, P0 = 288.15, 101_325.0

NATURAL_GAS = FuelProperties.from_gas("pipeline gas", {**FUEL_X})


def _gri30() -> ct.Solution:
    return ct.Solution("gri30.yaml")


def _elements(x: dict[str, float]) -> tuple[float, float, float, float]:
    return tuple(sum(v * ATOMS[s][i] for s, v in x.items()) for i in range(4))


def _worked_example() -> dict[str, float | dict[str, float]]:
    g = _gri30()
    ex: dict[str, float | dict[str, float]] = {}
    # Step 1: humidity ratio and humid-air composition.
    p_sat = _PSat_T(T_AMB) * 1e6
    m_da = sum(x * g.molecular_weights[g.species_index(s)] for s, x in DRY_AIR.items()) / 1e3
    m_w = g.molecular_weights[g.species_index("H2O")] / 1e3
    w = m_w / m_da * RH * p_sat / (P_AMB - RH * p_sat)
    x_w = (w / m_w) / (w / m_w + 1.0 / m_da)
    air = {s: x * (1.0 - x_w) for s, x in DRY_AIR.items()}
    air["H2O"] = x_w
    ex["w"], ex["air"] = w, air
    # Step 2: the compressor, isentropic then actual.
    g.TPX = T1, P1, air
    h1, s1, m_air_molar = g.enthalpy_mass, g.entropy_mass, g.mean_molecular_weight / 1e3
    g.SP = s1, P2
    ex["t2s"], h2s = g.T, g.enthalpy_mass
    g.HP = h1 + (h2s - h1) / ETA_C, P2
    ex["t2"], h2 = g.T, g.enthalpy_mass
    ex["h1"], ex["h2"] = h1, h2
    # Step 3: the fuel, its enthalpy and LHV (complete combustion at 25 degC, water vapour).
    g.TPX = T_FUEL, 101_325.0, FUEL_X
    h_f, m_f_molar = g.enthalpy_mass, g.mean_molecular_weight / 1e3
    c, h, o, n = _elements(FUEL_X)

    def h_mol(species: str) -> float:
        g.TPX = 298.15, 101_325.0, {species: 1.0}
        return g.enthalpy_mole / 1e3

    h_fuel_mol = sum(x * h_mol(s) for s, x in FUEL_X.items())
    o2_needed = c + h / 4.0 - o / 2.0
    products = c * h_mol("CO2") + h / 2.0 * h_mol("H2O") + n / 2.0 * h_mol("N2")
    ex["lhv"] = (h_fuel_mol + o2_needed * h_mol("O2") - products) / m_f_molar
    # Step 4: the exhaust by an element balance, mol/s.
    n_f, n_a = M_FUEL / m_f_molar, M_AIR / m_air_molar
    exhaust = {s: n_a * x for s, x in air.items()}
    exhaust["CO2"] += n_f * c
    exhaust["H2O"] += n_f * h / 2.0
    exhaust["N2"] += n_f * n / 2.0
    exhaust["O2"] -= n_f * o2_needed
    total = sum(exhaust.values())
    x_e = {s: v / total for s, v in exhaust.items()}
    ex["x_exhaust"] = x_e
    ex["o2_dry"] = exhaust["O2"] / (total - exhaust["H2O"])
    m_e = M_FUEL + M_AIR
    # Step 5: the turbine's energy balance gives the output.
    g.TPX = T_EXHAUST, P_AMB, x_e
    h_e, s_e = g.enthalpy_mass, g.entropy_mass
    g.TPX = T0, P0, x_e
    h_e0, s_e0 = g.enthalpy_mass, g.entropy_mass
    power = ETA_GEN * (M_FUEL * h_f + M_AIR * h1 - m_e * h_e - LOSS_FRACTION * M_FUEL * ex["lhv"])
    ex["power"] = power
    ex["heat_loss"] = power * (1.0 / ETA_GEN - 1.0) + LOSS_FRACTION * M_FUEL * ex["lhv"]
    # Step 6: the mixed turbine inlet temperature, all the air mixed and burnt.
    g.HPX = (M_FUEL * h_f + M_AIR * h2) / m_e, P2, x_e
    ex["tit"] = g.T
    # Step 7: exhaust energy and thermomechanical exergy relative to (T0, p0).
    ex["exhaust_energy"] = m_e * (h_e - h_e0)
    ex["exhaust_exergy"] = m_e * ((h_e - h_e0) - T0 * (s_e - s_e0))
    # Step 8: the fuel's chemical exergy, Szargut's table with the mixing term at 25 degC,
    # plus its physical exergy at 25 degC against T0 = 15 degC (constant cp).
    mix = 8.314462618 * 298.15 * sum(x * math.log(x) for x in FUEL_X.values())
    e_mol = sum(x * SZARGUT_KJ_PER_MOL[s] * 1e3 for s, x in FUEL_X.items()) + mix
    g.TPX = T_FUEL, 101_325.0, FUEL_X
    cp_f = g.cp_mass
    ex["fuel_exergy_per_kg"] = e_mol / m_f_molar + cp_f * (
        (T_FUEL - T0) - T0 * math.log(T_FUEL / T0)
    )
    return ex


EXAMPLE = _worked_example()


def _row(**changes) -> dict[str, float]:
    row = {
        "fuel_mass_flow": M_FUEL,
        "fuel_temperature": T_FUEL,
        "generator_power": EXAMPLE["power"],
        "compressor_inlet_temperature": T1,
        "compressor_inlet_pressure": P1,
        "compressor_discharge_temperature": EXAMPLE["t2"],
        "compressor_discharge_pressure": P2,
        "exhaust_temperature": T_EXHAUST,
        "ambient_temperature": T_AMB,
        "ambient_pressure": P_AMB,
        "ambient_relative_humidity": RH,
    }
    row.update(changes)
    return row


def _run(rows, params=None, fuel=NATURAL_GAS, t0=T0, p0=P0, text=None, index=None):
    rows = [rows] if isinstance(rows, dict) else rows
    context = ModelContext(dead_state(t0, p0), fuel, text or {})
    return gas_turbine_performance(pd.DataFrame(rows, index=index), params or {}, context)


@pytest.fixture(scope="module")
def worked() -> pd.Series:
    return _run(_row()).iloc[0]


# --- the worked example, step by step -------------------------------------------------


def test_step1_humidity_ratio(worked):
    # The model's ideal mixture uses the same form; IF97 saturation from two libraries.
    assert worked["inlet_humidity_ratio"] == pytest.approx(EXAMPLE["w"], rel=1e-4)


def test_step2_compressor(worked):
    # Same ideal-gas model class, independent fits: 5e-4 is what test_humid_air.py
    # establishes for an isentropic compression against gri30.
    assert worked["compressor_pressure_ratio"] == pytest.approx(18.0, rel=1e-12)
    assert worked["compressor_isentropic_discharge_temperature_k"] == pytest.approx(
        EXAMPLE["t2s"], rel=5e-4
    )
    assert worked["compressor_isentropic_efficiency"] == pytest.approx(ETA_C, rel=1e-3)
    rise = EXAMPLE["h2"] - EXAMPLE["h1"]
    assert worked["compressor_power_w"] == pytest.approx(M_AIR * rise, rel=1e-3)


def test_step3_heating_value_and_heat_rate(worked):
    assert NATURAL_GAS.lhv_j_per_kg == pytest.approx(EXAMPLE["lhv"], rel=1e-4)
    eta_lhv = EXAMPLE["power"] / (M_FUEL * EXAMPLE["lhv"])
    assert worked["eta_1_lhv"] == pytest.approx(eta_lhv, rel=1e-4)
    assert worked["heat_rate_lhv_j_per_kwh"] == pytest.approx(3.6e6 / eta_lhv, rel=1e-4)
    # HHV basis: output over m_f HHV; heat rate in J/kWh is 3.6e6 J/kWh over eta.
    assert worked["eta_1"] == pytest.approx(
        EXAMPLE["power"] / (M_FUEL * NATURAL_GAS.hhv_j_per_kg), rel=1e-12
    )
    assert worked["heat_rate_j_per_kwh"] * worked["eta_1"] == pytest.approx(3.6e6, rel=1e-12)
    # The scenario's figures, for the reader: ~42.9 MW at ~38.6 % LHV.
    assert EXAMPLE["power"] == pytest.approx(42.9e6, rel=1e-3)
    assert eta_lhv == pytest.approx(0.3863, abs=1e-4)


def test_step4_and_5_air_and_exhaust_flow_from_the_heat_balance(worked):
    # The model recovers the scenario's air flow from the output alone (heat-balance
    # method); gri30 against NASA TM-4513 data moves it by a few 1e-5.
    assert worked["air_mass_flow_kg_per_s"] == pytest.approx(M_AIR, rel=2e-4)
    assert worked["exhaust_mass_flow_kg_per_s"] == pytest.approx(M_AIR + M_FUEL, rel=2e-4)
    assert worked["exhaust_o2_dry"] == pytest.approx(EXAMPLE["o2_dry"], rel=1e-3)
    assert worked["heat_loss_w"] == pytest.approx(EXAMPLE["heat_loss"], rel=1e-4)
    assert worked["energy_balance_error"] == pytest.approx(0.0, abs=1e-12)
    assert worked["flags"] == 0


def test_step6_mixed_turbine_inlet_temperature(worked):
    # About 1475 K; 1e-3 (1.5 K) covers the two property sets' enthalpies at 1500 K.
    assert worked["mixed_turbine_inlet_temperature_k"] == pytest.approx(EXAMPLE["tit"], rel=1e-3)


def test_step7_exhaust_energy_and_exergy(worked):
    assert worked["exhaust_energy_w"] == pytest.approx(EXAMPLE["exhaust_energy"], rel=1e-3)
    assert worked["exhaust_exergy_w"] == pytest.approx(EXAMPLE["exhaust_exergy"], rel=1e-3)


def test_step8_second_law(worked):
    fuel_exergy = M_FUEL * EXAMPLE["fuel_exergy_per_kg"]
    assert worked["fuel_exergy_w"] == pytest.approx(fuel_exergy, rel=1e-4)
    assert worked["eta_2"] == pytest.approx(EXAMPLE["power"] / fuel_exergy, rel=1e-4)
    assert worked["lost_work_w"] == pytest.approx(worked["exergy_destroyed_internal_w"], rel=1e-9)
    # The account closes: fuel exergy = output + destroyed + exhaust (net of the air).
    total = (
        worked["generator_power_w"]
        + worked["exergy_destroyed_internal_w"]
        + worked["exergy_lost_exhaust_w"]
    )
    assert total == pytest.approx(worked["fuel_exergy_w"], rel=1e-12)
    assert worked["exergy_destroyed_and_lost_w"] == pytest.approx(
        fuel_exergy - EXAMPLE["power"], rel=1e-4
    )
    # The recoverable exhaust exergy is part of what the exhaust carries out.
    assert 0 < worked["exhaust_exergy_w"] < worked["exergy_lost_exhaust_w"]


def test_energy_balance_closes_with_outside_properties(worked):
    # gri30 enthalpies of the model's own air and exhaust flows: fuel + air in equals
    # output + losses + exhaust, to 1e-4 of the heat input.
    g = _gri30()
    g.TPX = T_FUEL, 101_325.0, FUEL_X
    h_f = g.enthalpy_mass
    g.TPX = T1, P1, EXAMPLE["air"]
    h_a = g.enthalpy_mass
    g.TPX = T_EXHAUST, P_AMB, EXAMPLE["x_exhaust"]
    h_e = g.enthalpy_mass
    m_a, m_e = worked["air_mass_flow_kg_per_s"], worked["exhaust_mass_flow_kg_per_s"]
    residual = (
        M_FUEL * h_f + m_a * h_a - m_e * h_e - worked["generator_power_w"] - worked["heat_loss_w"]
    )
    assert m_e == pytest.approx(m_a + M_FUEL, rel=1e-12)
    assert abs(residual) < 1e-4 * worked["fuel_heat_input_lhv_w"]


# --- compressor against the real-gas humid-air formulation ---------------------------


@pytest.mark.parametrize(
    "t1, pressure_ratio, rh",
    [(288.15, 10.0, 0.6), (268.15, 10.0, 0.8), (308.15, 8.0, 0.4), (288.15, 6.0, 0.6)],
)
def test_compressor_against_hapropssi(t1, pressure_ratio, rh):
    # HAPropsSI inverts on entropy per kg dry air; its enthalpy is per kg humid air. Its
    # range ends at 623.15 K (350 degC), so the pressure ratios stay at or below 10
    # (the band test_humid_air.py establishes up to 10 bar; the worked example's ratio
    # of 18 is checked against gri30 above). Both at the model's humidity ratio. The
    # real-gas departure puts the efficiency 0.16-0.20 % apart here (observed): the
    # issue's 0.2 % holds, with little to spare at the cold end.
    p1 = 100e3
    p2 = pressure_ratio * p1
    w = float(gas_turbine_module.humid_air.humidity_ratio(rh, t1, p1)[0])
    assert w == pytest.approx(HAPropsSI("W", "T", t1, "P", p1, "R", rh), rel=6e-3)
    s1 = HAPropsSI("Sda", "T", t1, "P", p1, "W", w)
    t2s = HAPropsSI("T", "P", p2, "Sda", s1, "W", w)
    t2 = t1 + (t2s - t1) / 0.87
    h1 = HAPropsSI("Hha", "T", t1, "P", p1, "W", w)
    h2s = HAPropsSI("Hha", "T", t2s, "P", p2, "W", w)
    h2 = HAPropsSI("Hha", "T", t2, "P", p2, "W", w)
    out = _run(
        _row(
            compressor_inlet_temperature=t1,
            compressor_inlet_pressure=p1,
            compressor_discharge_temperature=t2,
            compressor_discharge_pressure=p2,
            ambient_temperature=t1,
            ambient_pressure=p1,
            ambient_relative_humidity=rh,
        )
    ).iloc[0]
    assert out["inlet_humidity_ratio"] == pytest.approx(w, rel=1e-12)
    assert out["compressor_isentropic_discharge_temperature_k"] == pytest.approx(t2s, rel=2e-3)
    assert out["compressor_isentropic_efficiency"] == pytest.approx(
        (h2s - h1) / (h2 - h1), rel=2e-3
    )
    # The air's enthalpy rise (compressor power per kg) agrees closer still.
    assert out["compressor_power_w"] / out["air_mass_flow_kg_per_s"] == pytest.approx(
        h2 - h1, rel=1e-3
    )


# --- metered air flow: the balance is checked ----------------------------------------


def test_metered_air_flow_checks_the_balance():
    exact = _run(_row(air_mass_flow=M_AIR)).iloc[0]
    assert exact["air_mass_flow_kg_per_s"] == M_AIR
    # The scenario's own air flow: closes to the property-set difference.
    assert abs(exact["energy_balance_error"]) < 5e-4
    assert exact["flags"] == 0
    high = _run(_row(air_mass_flow=1.05 * M_AIR)).iloc[0]
    # 5.6 kg/s more air heated from 15 to 550 degC is ~3.3 MW, ~3 % of the LHV input;
    # the model charges it to the losses (by hand with cp ~ 1.1 kJ/(kg K)).
    by_hand = 0.05 * M_AIR * 1.1e3 * (T_EXHAUST - T1) / (M_FUEL * EXAMPLE["lhv"])
    assert -high["energy_balance_error"] == pytest.approx(by_hand, rel=0.05)
    assert high["flags"] == Flag.ENERGY_BALANCE_OPEN
    assert high["lost_work_w"] == pytest.approx(high["exergy_destroyed_internal_w"], rel=1e-9)
    # A meter gap falls back to the heat balance for that row only.
    gap = _run([_row(air_mass_flow=np.nan), _row(air_mass_flow=M_AIR)])
    assert gap["air_mass_flow_kg_per_s"].iloc[0] == pytest.approx(M_AIR, rel=2e-4)
    assert gap["energy_balance_error"].iloc[0] == pytest.approx(0.0, abs=1e-12)


# --- ISO correction ------------------------------------------------------------------

CURVES = {
    "power_correction_t1": -6.5e-3,
    "power_correction_t2": -2.0e-5,
    "power_correction_t3": 1.0e-7,
    "power_correction_p1": 1.0,
    "power_correction_w1": -0.3,
    "heat_rate_correction_t1": 1.8e-3,
    "heat_rate_correction_t2": 1.0e-5,
    "heat_rate_correction_p1": 0.0,
    "heat_rate_correction_w1": 0.1,
}
"""Invented design curves for the test (no manufacturer's data)."""


def test_iso_correction_by_hand():
    t1, p_amb, rh = 303.15, 99_000.0, 0.5
    out = _run(
        _row(
            compressor_inlet_temperature=t1,
            ambient_temperature=t1,
            ambient_pressure=p_amb,
            compressor_inlet_pressure=p_amb - 1000.0,
            ambient_relative_humidity=rh,
        ),
        params=CURVES,
        text={"iso_correction": "polynomial"},
    ).iloc[0]
    dt, dp = t1 - 288.15, p_amb / 101_325.0 - 1.0
    dw = out["inlet_humidity_ratio"] - ISO_HUMIDITY_RATIO
    alpha = (1 - 6.5e-3 * dt - 2.0e-5 * dt**2 + 1.0e-7 * dt**3) * (1 + dp) * (1 - 0.3 * dw)
    beta = (1 + 1.8e-3 * dt + 1.0e-5 * dt**2) * (1 + 0.1 * dw)
    assert out["power_iso_w"] == pytest.approx(out["generator_power_w"] / alpha, rel=1e-12)
    assert out["heat_rate_iso_lhv_j_per_kwh"] == pytest.approx(
        out["heat_rate_lhv_j_per_kwh"] / beta, rel=1e-12
    )
    # At 30 degC the unit makes less than at ISO: the ISO figure is the larger.
    assert out["power_iso_w"] > out["generator_power_w"]


def test_iso_humidity_ratio_against_hapropssi():
    # 15 degC, 60 %, 101.325 kPa: HAPropsSI's includes the enhancement factor, the
    # ideal mixture's is 0.4-0.5 % lower (see test_humid_air.py).
    w = HAPropsSI("W", "T", 288.15, "P", 101_325.0, "R", 0.6)
    iso = float(ISO_HUMIDITY_RATIO)
    assert iso == pytest.approx(w, rel=6e-3)
    assert iso < w


def test_iso_correction_is_identity_at_iso_and_nan_without_curves():
    at_iso = _run(
        _row(compressor_inlet_temperature=288.15, ambient_pressure=101_325.0),
        params=CURVES,
        text={"iso_correction": "polynomial"},
    ).iloc[0]
    # Ambient RH 60 % at 15 degC: every factor is 1.
    assert at_iso["power_iso_w"] == pytest.approx(at_iso["generator_power_w"], rel=1e-12)
    assert at_iso["heat_rate_iso_lhv_j_per_kwh"] == pytest.approx(
        at_iso["heat_rate_lhv_j_per_kwh"], rel=1e-12
    )
    unconfigured = _run(_row(), params=CURVES).iloc[0]
    assert math.isnan(unconfigured["power_iso_w"])
    assert math.isnan(unconfigured["heat_rate_iso_lhv_j_per_kwh"])
    assert unconfigured["flags"] == 0


# --- balances for many operating points ----------------------------------------------

_GRI30 = _gri30()


@settings(max_examples=60, deadline=None)
@given(
    t1=st.floats(253.15, 318.15),
    rh=st.floats(0.0, 1.0),
    pressure_ratio=st.floats(8.0, 30.0),
    eta_c=st.floats(0.78, 0.92),
    m_f=st.floats(0.5, 6.0),
    eta_lhv=st.floats(0.25, 0.42),
    t_exhaust=st.floats(700.0, 900.0),
    t0=st.floats(263.15, 313.15),
)
def test_balances_hold_for_any_operating_point(
    t1, rh, pressure_ratio, eta_c, m_f, eta_lhv, t_exhaust, t0
):
    p1 = 100e3
    p2 = pressure_ratio * p1
    w = float(gas_turbine_module.humid_air.humidity_ratio(rh, t1, P_AMB)[0])
    t2s = float(gas_turbine_module.humid_air.isentropic_temperature(t1, p1, p2, w)[0])
    power = eta_lhv * m_f * NATURAL_GAS.lhv_j_per_kg
    row = _row(
        fuel_mass_flow=m_f,
        generator_power=power,
        compressor_inlet_temperature=t1,
        compressor_inlet_pressure=p1,
        compressor_discharge_temperature=t1 + (t2s - t1) / eta_c,
        compressor_discharge_pressure=p2,
        exhaust_temperature=t_exhaust,
        ambient_temperature=t1,
        ambient_relative_humidity=rh,
    )
    out = _run(row, t0=t0).iloc[0]
    assert out["flags"] == 0
    # Gouy-Stodola, two routes.
    assert out["lost_work_w"] == pytest.approx(out["exergy_destroyed_internal_w"], rel=1e-9)
    assert 0 < out["eta_2"] <= 1
    assert out["sgen_w_per_k"] > 0
    # Temperature-rise ratio eta_c against the enthalpy-rise ratio: cp rises with T.
    assert out["compressor_isentropic_efficiency"] == pytest.approx(eta_c, rel=0.02)
    # Energy closes with gri30 enthalpies of the model's streams (exhaust composition
    # rebuilt from the model's air flow by an element balance written here). The two
    # property sets' enthalpy rises of air differ by up to ~1e-4 and the air is up to
    # ~70 times the fuel flow here: 5e-4 of the heat input.
    g = _GRI30
    c, h, o, n = _elements(FUEL_X)
    g.TPX = T_FUEL, 101_325.0, FUEL_X
    h_f, n_f = g.enthalpy_mass, m_f / (g.mean_molecular_weight / 1e3)
    m_da = 28.965e-3  # U.S. Standard Atmosphere 1976 (from memory)
    x_w = (w / 18.015e-3) / (w / 18.015e-3 + 1 / m_da)
    air = {s: x * (1 - x_w) for s, x in DRY_AIR.items()}
    air["H2O"] = x_w
    g.TPX = t1, p1, air
    h_a, n_a = g.enthalpy_mass, out["air_mass_flow_kg_per_s"] / (g.mean_molecular_weight / 1e3)
    exhaust = {s: n_a * x for s, x in air.items()}
    exhaust["CO2"] += n_f * c
    exhaust["H2O"] += n_f * h / 2
    exhaust["N2"] += n_f * n / 2
    exhaust["O2"] -= n_f * (c + h / 4 - o / 2)
    g.TPX = t_exhaust, P_AMB, exhaust
    residual = (
        m_f * h_f
        + out["air_mass_flow_kg_per_s"] * h_a
        - out["exhaust_mass_flow_kg_per_s"] * g.enthalpy_mass
        - power
        - out["heat_loss_w"]
    )
    assert abs(residual) < 5e-4 * out["fuel_heat_input_lhv_w"]


# --- bad rows, flags, types, configuration -------------------------------------------


def test_bad_rows_are_nan_and_flagged_without_touching_the_others():
    rows = [
        _row(),
        _row(exhaust_temperature=np.nan),
        _row(ambient_relative_humidity=60.0),  # percent passed as a fraction
        _row(generator_power=0.9 * M_FUEL * NATURAL_GAS.lhv_j_per_kg),  # < theoretical air
        _row(compressor_discharge_temperature=np.nan),
        _row(fuel_mass_flow=0.0),
    ]
    out = _run(rows, index=pd.date_range("2031-01-01", periods=6, freq="min"))
    assert out.index.equals(pd.date_range("2031-01-01", periods=6, freq="min"))
    assert out["flags"].tolist() == [
        0,
        Flag.INPUT_OUT_OF_RANGE,
        Flag.INPUT_OUT_OF_RANGE,
        Flag.INPUT_OUT_OF_RANGE | Flag.ENERGY_BALANCE_OPEN,
        Flag.INPUT_OUT_OF_RANGE,
        Flag.INPUT_OUT_OF_RANGE,
    ]
    assert out.drop(columns=["power_iso_w", "heat_rate_iso_lhv_j_per_kwh"]).iloc[0].notna().all()
    for i in (1, 2, 3, 5):
        assert out.iloc[i].drop("flags").isna().all()
    # A failed discharge thermocouple blanks the compressor only.
    assert out["heat_rate_lhv_j_per_kwh"].iloc[4] == pytest.approx(
        out["heat_rate_lhv_j_per_kwh"].iloc[0], rel=1e-12
    )
    assert math.isnan(out["compressor_isentropic_efficiency"].iloc[4])
    assert math.isnan(out["mixed_turbine_inlet_temperature_k"].iloc[4])


def test_impossible_readings_are_flagged():
    # Discharge colder than isentropic: an efficiency above one.
    cold = _run(_row(compressor_discharge_temperature=EXAMPLE["t2s"] - 10.0)).iloc[0]
    assert cold["flags"] == Flag.ISENTROPIC_ABOVE_ONE
    assert cold["compressor_isentropic_efficiency"] > 1
    # More output than the fuel's exergy (and HHV): impossible whatever the air flow.
    metered = _row(air_mass_flow=M_AIR, generator_power=1.2 * M_FUEL * NATURAL_GAS.hhv_j_per_kg)
    out = _run(metered).iloc[0]
    assert out["eta_2"] > 1 and out["eta_1"] > 1
    assert int(out["flags"]) == (
        Flag.ABOVE_CARNOT
        | Flag.EFFICIENCY_ABOVE_ONE
        | Flag.NEGATIVE_ENTROPY_GENERATION
        | Flag.ENERGY_BALANCE_OPEN
    )


def test_ambient_defaults():
    bare = {k: v for k, v in _row().items() if not k.startswith(("ambient", "compressor_inlet_p"))}
    # The plant's default dead state of 25 degC, a 15 degC inlet: the humidity is taken
    # at the inlet (60 % at 15 degC and p0, the ISO humidity ratio), the pressure at p0.
    out = _run(bare, t0=298.15, p0=P_AMB).iloc[0]
    assert out["inlet_humidity_ratio"] == pytest.approx(ISO_HUMIDITY_RATIO, rel=1e-12)
    assert out["compressor_pressure_ratio"] == pytest.approx(P2 / P_AMB, rel=1e-12)
    # 60 % at 25 degC would be above saturation at 15 degC (HAPropsSI, 1 atm).
    w_25 = HAPropsSI("W", "T", 298.15, "P", P_AMB, "R", 0.6)
    assert w_25 > HAPropsSI("W", "T", 288.15, "P", P_AMB, "R", 1.0)


def test_volume_flow_and_measured_heating_value():
    density = NATURAL_GAS.density_kg_per_m3
    by_volume = _run({**_row(), "fuel_mass_flow": np.nan, "fuel_volume_flow": M_FUEL / density})
    assert by_volume["fuel_mass_flow_kg_per_s"].iloc[0] == pytest.approx(M_FUEL, rel=1e-12)
    richer = _run(_row(fuel_hhv=1.01 * NATURAL_GAS.hhv_j_per_kg)).iloc[0]
    base = _run(_row()).iloc[0]
    assert richer["fuel_heat_input_hhv_w"] == pytest.approx(
        1.01 * base["fuel_heat_input_hhv_w"], rel=1e-12
    )
    assert richer["fuel_exergy_w"] > base["fuel_exergy_w"]


def test_configuration_errors():
    no_composition = FuelProperties("gas by heating values", hhv_j_per_kg=52e6, lhv_j_per_kg=47e6)
    with pytest.raises(ValueError, match="needs the fuel's composition for its exhaust"):
        _run(_row(), fuel=no_composition)
    with pytest.raises(ValueError, match="a gas_turbine burns a fuel, but the model context has"):
        _run(_row(), fuel=None)
    no_flow = {k: v for k, v in _row().items() if k != "fuel_mass_flow"}
    with pytest.raises(ValueError, match="needs fuel_mass_flow or fuel_volume_flow"):
        _run(no_flow)


def test_catalogue_entry():
    kind = get_kind("gas_turbine")
    assert kind is KIND
    assert kind.needs_fuel
    assert [p.message for p in kind.validate(list(_row()), {}, has_fuel=False)] == [
        "a gas_turbine burns a fuel; name one"
    ]
    assert kind.validate(list(_row()), {}, has_fuel=True) == []
    problems = kind.validate(list(_row()), {}, True, {"iso_correction": "tables"})
    assert [str(p) for p in problems] == [
        "parameter 'iso_correction': 'tables' is not one of none, polynomial"
    ]
    out = _run(_row())
    assert list(out.columns) == [c.name for c in KIND.results] + ["flags"]
    assert out["flags"].dtype == np.int64


def test_docstring_examples():
    result = doctest.testmod(gas_turbine_module)
    assert result.attempted == 9
    assert result.failed == 0


def test_a_dead_state_per_row_is_the_same_as_row_by_row():
    # The pipeline's ambient tag gives one T0 per interval.
    t0 = np.array([278.15, 288.15, 298.15])
    rows = pd.DataFrame([_row()] * 3)
    together = gas_turbine_performance(
        rows, {}, ModelContext(dead_state(t0, np.full(3, P0)), NATURAL_GAS)
    )
    for i, t in enumerate(t0):
        alone = _run(_row(), t0=float(t)).iloc[0]
        pd.testing.assert_series_equal(together.iloc[i], alone, check_names=False, rtol=1e-12)
    # Exergy depends on T0, the first law does not.
    assert together["eta_1"].nunique() == 1
    assert together["exhaust_exergy_w"].is_monotonic_decreasing
