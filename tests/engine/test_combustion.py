"""Complete-combustion stoichiometry against hand calculations, iapws and Cantera."""

from __future__ import annotations

import cantera as ct
import numpy as np
import pandas as pd
import pytest

from engine import combustion, gas
from engine.combustion import DRY_AIR_MOLE_FRACTIONS as AIR
from engine.fuels import FuelProperties, GasComposition, UltimateAnalysis

METHANE = GasComposition({"CH4": 1.0}).ultimate_analysis()
X_O2 = AIR["O2"]

# A fictional coal of our own, as fired (mass fractions).
COAL = UltimateAnalysis(
    carbon=0.62, hydrogen=0.042, oxygen=0.075, nitrogen=0.012, sulfur=0.011, ash=0.12, moisture=0.12
)


def test_dry_air_composition_and_molar_mass():
    # U.S. Standard Atmosphere 1976, Table 3: M = 28.9645 g/mol (from memory).
    assert sum(AIR.values()) == pytest.approx(1.0, abs=1e-15)
    assert combustion.dry_air_molar_mass_kg_per_mol() == pytest.approx(28.9645e-3, rel=1e-4)


def test_theoretical_air_methane_hand_calculation():
    # CH4 + 2 O2: 2 / x_O2 mol of dry air per mol CH4; 17.2 kg/kg (common handbook value).
    air = 2.0 / X_O2 * combustion.dry_air_molar_mass_kg_per_mol() / gas.molar_mass_kg_per_mol("CH4")
    assert combustion.theoretical_air_kg_per_kg(METHANE) == pytest.approx(air, rel=1e-12)
    assert air == pytest.approx(17.2, abs=0.05)


@pytest.mark.parametrize("o2_percent", [1.0, 3.0, 6.0, 10.0])
def test_excess_air_from_o2_methane_hand_calculation(o2_percent):
    # Hand calculation per mole of CH4 with air factor λ: CH4 + (2λ/x) air ->
    # CO2 + 2 H2O + 2(λ-1) O2 + inerts. Dry products 1 + 2(λ-1) + 2λ(1-x)/x = 2λ/x - 1,
    # so y = 2(λ-1) / (2λ/x - 1)  =>  λ = (2 - y) / (2 - 2y/x).
    # Wet: products + 2 + 2λφ/x (φ water per mol dry air) => λ = (2 + y) / (2 - 2y(1+φ)/x).
    y = o2_percent / 100.0
    dry = (2 - y) / (2 - 2 * y / X_O2) - 1
    assert combustion.excess_air_from_o2(y, METHANE, "dry") == pytest.approx(dry, abs=1e-3)
    omega = 0.012
    phi = omega * combustion.dry_air_molar_mass_kg_per_mol() / gas.molar_mass_kg_per_mol("H2O")
    wet = (2 + y) / (2 - 2 * y * (1 + phi) / X_O2) - 1
    assert combustion.excess_air_from_o2(y, METHANE, "wet", omega) == pytest.approx(wet, abs=1e-3)
    # The rule of thumb EA ~ O2 / (20.9 - O2) (common practice) holds within a few points
    # at the O2 levels boilers run at; it drifts at high O2.
    if o2_percent <= 6.0:
        assert dry == pytest.approx(o2_percent / (20.9 - o2_percent), abs=0.05)


def test_excess_air_round_trip_coal_wet_and_dry():
    excess = np.array([0.05, 0.2, 0.45, 1.5])
    for basis in ("dry", "wet"):
        o2 = combustion.o2_from_excess_air(excess, COAL, basis, 0.015, 0.004)
        back = combustion.excess_air_from_o2(o2, COAL, basis, 0.015, 0.004)
        assert back == pytest.approx(excess, rel=1e-12)


def test_excess_air_impossible_rows_are_nan():
    o2 = pd.Series([0.03, np.nan, -0.01, 0.2095, 0.25], index=list("abcde"))
    out = combustion.excess_air_from_o2(o2, METHANE)
    assert isinstance(out, pd.Series) and list(out.index) == list("abcde")
    assert np.isfinite(out["a"]) and out[["b", "c", "d", "e"]].isna().all()
    with pytest.raises(ValueError, match="basis must be 'dry' or 'wet', got 'moist'"):
        combustion.excess_air_from_o2(0.03, METHANE, "moist")


def test_flue_gas_balances_close():
    fg = combustion.flue_gas(COAL, np.array([0.2, 0.4]), 0.01, 0.005)
    moles = COAL.moles_per_kg()
    air = fg.air_amounts_mol_per_kg
    # Elements in = elements out, per kg of fuel (carbon less the unburned carbon).
    carbon_in = moles["C"] - 0.005 / 12.011e-3 + air["CO2"]
    assert fg.amounts_mol_per_kg["CO2"] == pytest.approx(carbon_in, rel=1e-12)
    oxygen_in = moles["O"] + moles["H2O"] + 2 * air["O2"] + 2 * air["CO2"] + air["H2O"]
    products = fg.amounts_mol_per_kg
    oxygen_out = 2 * products["CO2"] + products["H2O"] + 2 * products["SO2"] + 2 * products["O2"]
    assert oxygen_out == pytest.approx(oxygen_in, rel=1e-12)
    # Mass: fuel less ash and unburned carbon, plus moist air, becomes flue gas.
    wet_air = fg.dry_air_kg_per_kg + fg.air_water_kg_per_kg
    assert fg.wet_kg_per_kg == pytest.approx(1.0 - 0.12 - 0.005 + wet_air, rel=1e-4)
    fractions = fg.wet_mole_fractions
    assert sum(fractions.values()) == pytest.approx(np.ones(2), rel=1e-12)
    assert "H2O" not in fg.dry_mole_fractions


def test_co2_per_unit_energy_methane():
    # One mole of CO2 per mole of CH4: M_CO2 / HHV_molar = 44.009 g / 890.6 kJ = 49.4 kg/GJ.
    methane = FuelProperties.from_gas("methane", {"CH4": 1.0})
    expected = 44.009e-3 / GasComposition({"CH4": 1.0}).hhv_j_per_mol
    assert combustion.co2_emitted_kg_per_j(methane) == pytest.approx(expected, rel=1e-4)
    assert combustion.co2_emitted_kg_per_j(methane) * 1e9 == pytest.approx(49.4, abs=0.1)
    assert methane.co2_kg_per_j == pytest.approx(expected, rel=1e-4)


def test_humidity_ratio_against_iapws():
    # iapws (PyPI): IF97 saturation pressure and the IAPWS R14-08 sublimation pressure.
    from iapws._iapws import _Sublimation_Pressure
    from iapws.iapws97 import _PSat_T

    t = np.array([263.15, 298.15, 308.15])
    rh = np.array([0.8, 0.6, 0.4])
    p = 100_000.0
    p_sat = np.array(
        [_Sublimation_Pressure(263.15) * 1e6, _PSat_T(298.15) * 1e6, _PSat_T(308.15) * 1e6]
    )
    p_v = rh * p_sat
    ratio = gas.molar_mass_kg_per_mol("H2O") / combustion.dry_air_molar_mass_kg_per_mol()
    expected = ratio * p_v / (p - p_v)
    out = combustion.humidity_ratio_from_relative_humidity(rh, t, p)
    assert out == pytest.approx(expected, rel=1e-6)
    # 25 degC, 60 %, 1 atm: about 0.0119 kg/kg (psychrometric chart; from memory).
    assert combustion.humidity_ratio_from_relative_humidity(0.6, 298.15) == pytest.approx(
        0.0119, abs=2e-4
    )
    bad = combustion.humidity_ratio_from_relative_humidity([1.2, -0.1, np.nan], 298.15)
    assert np.isnan(bad).all()


@pytest.fixture(scope="module")
def complete_products() -> ct.Solution:
    """A Cantera ideal gas with only the species of complete combustion of methane in air.

    GRI-Mech 3.0 data for CH4, O2, N2, AR, CO2, H2O only: with no CO, OH, H, O or NO in
    the phase, the products are frozen at complete combustion. The adiabatic state is
    found with Cantera's HP setter at fixed composition.
    """
    species = {s.name: s for s in ct.Species.list_from_file("gri30.yaml")}
    names = ["CH4", "O2", "N2", "AR", "CO2", "H2O"]
    return ct.Solution(thermo="ideal-gas", species=[species[n] for n in names])


def _cantera_flame(solution: ct.Solution, excess_air: float, t_air: float) -> float:
    lam = 1.0 + excess_air
    air = 2.0 * lam / X_O2
    # Reactants: CH4 at 298.15 K mixed adiabatically with air at t_air. The enthalpy of
    # the reactant set is the sum of the two streams' enthalpies.
    solution.TPX = 298.15, 101_325.0, {"CH4": 1.0}
    h_fuel = solution.enthalpy_mole
    solution.TPX = t_air, 101_325.0, {k.upper() if k == "Ar" else k: v for k, v in AIR.items()}
    h_air = solution.enthalpy_mole * air
    products = {
        "CO2": 1.0 + air * AIR["CO2"],
        "H2O": 2.0,
        "O2": 2.0 * (lam - 1.0),
        "N2": air * AIR["N2"],
        "AR": air * AIR["Ar"],
    }
    total = sum(products.values())
    solution.TPX = 1500.0, 101_325.0, products
    solution.HP = (h_fuel + h_air) / total / solution.mean_molecular_weight, 101_325.0
    return solution.T


@pytest.mark.parametrize(
    ("excess_air", "t_air"),
    [(0.0, 298.15), (0.1, 298.15), (0.3, 298.15), (1.0, 298.15), (0.15, 600.0)],
)
def test_adiabatic_flame_temperature_methane_against_cantera(complete_products, excess_air, t_air):
    methane = FuelProperties.from_gas("methane", {"CH4": 1.0})
    ours = combustion.adiabatic_flame_temperature(methane, excess_air, t_air)
    assert ours == pytest.approx(_cantera_flame(complete_products, excess_air, t_air), abs=5.0)


def test_adiabatic_flame_stoichiometric_methane_handbook():
    # Complete combustion, no dissociation: about 2,330 K for stoichiometric methane-air
    # from 298 K (common textbook figure; the equilibrium value is 2,226 K). From memory.
    methane = FuelProperties.from_gas("methane", {"CH4": 1.0})
    assert combustion.adiabatic_flame_temperature(methane, 0.0, 298.15) == pytest.approx(
        2330.0, abs=15.0
    )


def test_fuel_enthalpy_closes_the_hhv():
    # Burning at 25 degC with water condensed releases exactly the HHV.
    coal = FuelProperties.from_ultimate_analysis("coal", COAL, hhv_j_per_kg=25.0e6)
    m = COAL.moles_per_kg()
    h = lambda s: gas.enthalpy_j_per_mol(s, 298.15)  # noqa: E731
    liquid = gas.CONDENSED_PHASES["H2O(l)"].h_formation_j_per_mol
    o_th = m["C"] + m["H"] / 4 + m["S"] - m["O"] / 2
    products = (
        m["C"] * h("CO2")
        + (m["H"] / 2 + m["H2O"]) * liquid
        + m["S"] * h("SO2")
        + m["N"] / 2 * h("N2")
    )
    released = combustion.fuel_enthalpy_j_per_kg(coal) + o_th * h("O2") - products
    assert released == pytest.approx(25.0e6, rel=1e-12)
    warm = combustion.fuel_enthalpy_j_per_kg(coal, 308.15) - combustion.fuel_enthalpy_j_per_kg(coal)
    assert warm == pytest.approx(10.0 * coal.specific_heat_j_per_kg_k, rel=1e-9)


def test_fuel_without_composition_is_refused():
    plain = FuelProperties("pipeline gas", hhv_j_per_kg=52.2e6)
    with pytest.raises(ValueError, match="fuel 'pipeline gas' has no composition"):
        combustion.co2_emitted_kg_per_j(plain)
