"""Heat-loss (indirect) boiler efficiency in the structure of ASME PTC 4.

Outside references: Cantera 3.2's GRI-Mech 3.0 enthalpies (an energy balance on the
formation basis that must give the same efficiency as the sum of PTC 4 losses), the
TM-4513 SO2 data in Cantera's nasa_gas.yaml, and a coal worked example of our own
computed step by step in the test.
"""

from __future__ import annotations

import cantera as ct
import numpy as np
import pandas as pd
import pytest

from engine import combustion, heatloss
from engine.fuels import FuelProperties, GasComposition, UltimateAnalysis

X = combustion.DRY_AIR_MOLE_FRACTIONS
T_REF = 298.15


@pytest.fixture(scope="module")
def enthalpy():
    """Molar enthalpy h(species, T) from Cantera data, J/mol, formation basis."""
    gri = {s.name: s for s in ct.Species.list_from_file("gri30.yaml")}
    nasa = {s.name: s for s in ct.Species.list_from_file("nasa_gas.yaml")}
    liquid = {s.name: s for s in ct.Species.list_from_file("nasa_condensed.yaml")}["H2O(L)"]
    table = {"CO2": gri["CO2"], "H2O": gri["H2O"], "O2": gri["O2"], "N2": gri["N2"]}
    table |= {"Ar": gri["AR"], "CH4": gri["CH4"], "SO2": nasa["SO2"], "H2O(l)": liquid}

    def h(species: str, t: float) -> float:
        return table[species].thermo.h(t) / 1e3

    return h


def test_losses_credits_and_efficiency_sum_to_one():
    fuel = FuelProperties.from_gas("gas", {"CH4": 0.92, "C2H6": 0.05, "N2": 0.03})
    out = heatloss.heat_loss_efficiency(
        fuel, np.array([0.02, 0.04]), np.array([400.0, 450.0]), 305.0,
        co_ppm=80.0, surface_loss_fraction=0.006, fuel_temperature_k=310.0,
    )  # fmt: skip
    losses = out[list(heatloss.LOSS_COLUMNS)].sum(axis=1)
    credits = out[list(heatloss.CREDIT_COLUMNS)].sum(axis=1)
    assert (out["eta_1_indirect"] + losses - credits).to_numpy() == pytest.approx(1.0, abs=1e-14)
    assert out["losses_total"].to_numpy() == pytest.approx(losses.to_numpy(), rel=1e-14)
    assert out["loss_fuel_moisture"].to_numpy() == pytest.approx(0.0, abs=1e-15)


def test_methane_against_a_cantera_energy_balance(enthalpy):
    # Energy balance per mole of CH4 with Cantera data: heat to the water = enthalpy of
    # fuel and moist air in - enthalpy of flue gas out - surface loss. Divided by the
    # HHV (also from Cantera data) it must equal 1 - Σ PTC 4 losses + Σ credits.
    o2, t_fg, t_air, omega, surface = 0.03, 423.15, 303.15, 0.01, 0.005
    methane = FuelProperties.from_gas("methane", {"CH4": 1.0})
    ours = heatloss.heat_loss_efficiency(
        methane, o2, t_fg, t_air, humidity_ratio=omega, surface_loss_fraction=surface
    )
    lam = (2 - o2) / (2 - 2 * o2 / X["O2"])  # dry basis, closed form (test_combustion)
    air = 2 * lam / X["O2"]
    water_air = air * omega * combustion.dry_air_molar_mass_kg_per_mol() / 18.015e-3
    h = enthalpy
    h_in = (
        h("CH4", T_REF)
        + sum(air * x * h(s, t_air) for s, x in X.items())
        + water_air * h("H2O", t_air)
    )
    products = {"CO2": 1 + air * X["CO2"], "H2O": 2 + water_air, "O2": 2 * (lam - 1)}
    products |= {"N2": air * X["N2"], "Ar": air * X["Ar"]}
    h_out = sum(n * h(s, t_fg) for s, n in products.items())
    hhv = h("CH4", T_REF) + 2 * h("O2", T_REF) - h("CO2", T_REF) - 2 * h("H2O(l)", T_REF)
    eta = (h_in - h_out) / hhv - surface
    assert ours["eta_1_indirect"].iloc[0] == pytest.approx(eta, abs=5e-4)
    assert ours["excess_air"].iloc[0] == pytest.approx(lam - 1, rel=1e-9)


def test_coal_worked_example_step_by_step(enthalpy):
    # Fictional coal-fired boiler of our own. Coal as fired: C 62 %, H 4.2 %, O 7.5 %,
    # N 1.2 %, S 1.1 %, ash 12 %, moisture 12 %; measured HHV 25.0 MJ/kg. Flue gas at the
    # air-heater outlet: 3.5 % O2 dry, 140 degC, 150 ppm CO dry. Air in at 30 degC with
    # 0.012 kg/kg humidity; coal at 25 degC. Refuse: 80 % fly ash with 5 % carbon, 20 %
    # bottom ash with 10 % carbon. Surface loss 0.4 %.
    coal = FuelProperties.from_ultimate_analysis(
        "coal", UltimateAnalysis(0.62, 0.042, 0.075, 0.012, 0.011, 0.12, 0.12), hhv_j_per_kg=25.0e6
    )
    hhv = 25.0e6
    t_fg, t_air, omega = 413.15, 303.15, 0.012

    # Step 1: unburned carbon from the refuse: A Σ f c / (1 - c).
    ubc = 0.12 * (0.8 * 0.05 / 0.95 + 0.2 * 0.10 / 0.90)
    assert heatloss.unburned_carbon_from_refuse(0.12, 0.05, 0.10, 0.8) == pytest.approx(
        ubc, rel=1e-12
    )
    assert ubc == pytest.approx(0.0077193, rel=1e-4)

    # Step 2: moles per kg and theoretical O2 of the fuel burned.
    c_b = (0.62 - ubc) / 12.011e-3
    h_mol, o_mol, n_mol, s_mol = (
        0.042 / 1.008e-3,
        0.075 / 15.999e-3,
        0.012 / 14.007e-3,
        0.011 / 32.06e-3,
    )
    w_mol = 0.12 / 18.015e-3
    o_th = c_b + h_mol / 4 + s_mol - o_mol / 2
    assert o_th == pytest.approx(59.39, abs=0.01)

    # Step 3: excess air from 3.5 % dry O2, λ = (O_th + y (P_d - O_th)) / (O_th - y A).
    y = 0.035
    a_th = o_th / X["O2"]
    p_d = c_b + s_mol + n_mol / 2
    lam = (o_th + y * (p_d - o_th)) / (o_th - y * a_th)
    air = lam * a_th
    water_air = air * omega * combustion.dry_air_molar_mass_kg_per_mol() / 18.015e-3

    # Step 4: dry flue gas per kg and the losses with Cantera's enthalpies.
    h = enthalpy
    dry = {"CO2": c_b + air * X["CO2"], "SO2": s_mol, "N2": n_mol / 2 + air * X["N2"]}
    dry |= {"O2": (lam - 1) * o_th, "Ar": air * X["Ar"]}
    dh = {s: h(s, t_fg) - h(s, T_REF) for s in ("CO2", "SO2", "N2", "O2", "Ar", "H2O")}
    expected = {
        "loss_dry_flue_gas": sum(n * dh[s] for s, n in dry.items()) / hhv,
        "loss_hydrogen_water": h_mol / 2 * (h("H2O", t_fg) - h("H2O(l)", T_REF)) / hhv,
        "loss_fuel_moisture": w_mol * (h("H2O", t_fg) - h("H2O(l)", T_REF)) / hhv,
        "loss_air_moisture": water_air * dh["H2O"] / hhv,
        # CO: n_dry ppm ΔH_CO; ΔH_CO = 393.51 - 110.53 = 282.98 kJ/mol (CODATA).
        "loss_co": sum(dry.values()) * 150e-6 * 282.98e3 / hhv,
        # Unburned carbon at 14,500 Btu/lbm (PTC 4; from memory) = 33.727 MJ/kg.
        "loss_unburned_carbon": ubc * 33.727e6 / hhv,
        "loss_surface": 0.004,
        "credit_dry_air": sum(air * x * (h(s, t_air) - h(s, T_REF)) for s, x in X.items()) / hhv,
        "credit_air_moisture": water_air * (h("H2O", t_air) - h("H2O", T_REF)) / hhv,
        "credit_fuel_sensible": 0.0,
    }
    out = heatloss.heat_loss_efficiency(
        coal, y, t_fg, t_air, humidity_ratio=omega, co_ppm=150.0,
        unburned_carbon_kg_per_kg=ubc, surface_loss_fraction=0.004,
    ).iloc[0]  # fmt: skip
    assert out["excess_air"] == pytest.approx(lam - 1, rel=1e-9)
    for column, value in expected.items():
        # 0.3 % relative (data sets and rounded constants), 1e-6 absolute floor.
        assert out[column] == pytest.approx(value, rel=3e-3, abs=1e-6), column
    eta = (
        1
        - sum(v for k, v in expected.items() if k.startswith("loss"))
        + sum(v for k, v in expected.items() if k.startswith("credit"))
    )
    assert out["eta_1_indirect"] == pytest.approx(eta, abs=2e-4)
    # Plausibility, common practice: coal-fired boilers run at about 15-25 % excess air
    # and 84-90 % efficiency on the HHV basis.
    assert 0.15 < out["excess_air"] < 0.25
    assert 0.84 < out["eta_1_indirect"] < 0.90
    # LHV basis: same output over the LHV input.
    assert out["eta_1_indirect_lhv"] == pytest.approx(
        out["eta_1_indirect"] * hhv / coal.lhv_j_per_kg, rel=1e-12
    )


def test_wet_basis_and_reference_temperature():
    fuel = FuelProperties.from_gas("methane", {"CH4": 1.0})
    ultimate = GasComposition({"CH4": 1.0}).ultimate_analysis()
    wet_o2 = combustion.o2_from_excess_air(0.15, ultimate, "wet", 0.01)
    dry_o2 = combustion.o2_from_excess_air(0.15, ultimate, "dry", 0.01)
    wet = heatloss.heat_loss_efficiency(
        fuel, wet_o2, 420.0, 300.0, o2_basis="wet", humidity_ratio=0.01
    )
    dry = heatloss.heat_loss_efficiency(fuel, dry_o2, 420.0, 300.0, humidity_ratio=0.01)
    assert wet["eta_1_indirect"].iloc[0] == pytest.approx(dry["eta_1_indirect"].iloc[0], rel=1e-12)
    # With air and fuel at the reference temperature there is nothing to credit.
    at_15 = heatloss.heat_loss_efficiency(
        fuel, 0.03, 420.0, 288.15, fuel_temperature_k=288.15, reference_temperature_k=288.15
    )
    assert at_15[list(heatloss.CREDIT_COLUMNS)].to_numpy() == pytest.approx(0.0, abs=1e-15)


def test_fuel_sensible_credit_and_measured_hhv():
    coal = FuelProperties.from_ultimate_analysis(
        "coal", UltimateAnalysis(0.62, 0.042, 0.075, 0.012, 0.011, 0.12, 0.12)
    )
    out = heatloss.heat_loss_efficiency(
        coal,
        0.035,
        410.0,
        300.0,
        fuel_temperature_k=318.15,
        fuel_hhv_j_per_kg=np.array([24e6, 26e6]),
    )
    assert out["credit_fuel_sensible"].to_numpy() == pytest.approx(
        1250.0 * 20.0 / np.array([24e6, 26e6]), rel=1e-9
    )
    ratio = out["loss_dry_flue_gas"].iloc[0] / out["loss_dry_flue_gas"].iloc[1]
    assert ratio == pytest.approx(26 / 24, rel=1e-12)


def test_series_index_and_nan_rows():
    fuel = FuelProperties.from_gas("methane", {"CH4": 1.0})
    index = pd.date_range("2026-01-01", periods=4, freq="min", tz="UTC")
    o2 = pd.Series([0.03, np.nan, 0.03, 0.25], index=index)
    out = heatloss.heat_loss_efficiency(fuel, o2, 420.0, 300.0)
    assert out.index.equals(index)
    assert np.isfinite(out["eta_1_indirect"].iloc[[0, 2]]).all()
    assert out["eta_1_indirect"].iloc[[1, 3]].isna().all()
    scalar = heatloss.heat_loss_efficiency(fuel, 0.03, 420.0, 300.0)
    assert len(scalar) == 1


def test_heating_value_only_fuel_is_refused():
    with pytest.raises(ValueError, match="has no composition"):
        heatloss.heat_loss_efficiency(FuelProperties("gas", 50e6), 0.03, 420.0, 300.0)


def test_surface_loss_at_part_load():
    assert heatloss.surface_loss_fraction_at_load(0.004, 0.5) == pytest.approx(0.008, rel=1e-15)
    out = heatloss.surface_loss_fraction_at_load(0.004, np.array([1.0, 0.0, np.nan]))
    assert out[0] == pytest.approx(0.004) and np.isnan(out[1:]).all()


def test_direct_indirect_reconciliation():
    diff, disagree = heatloss.direct_indirect_difference(
        np.array([0.90, 0.85, np.nan, 0.88]), np.array([0.885, 0.88, 0.88, 0.88]), tolerance=0.02
    )
    assert diff == pytest.approx([0.015, -0.03, np.nan, 0.0], nan_ok=True, abs=1e-12)
    assert disagree.tolist() == [False, True, False, False]
    d, flag = heatloss.direct_indirect_difference(0.92, 0.89, tolerance=0.01)
    assert d == pytest.approx(0.03) and flag is True
    index = pd.Index(["a", "b"])
    d, flag = heatloss.direct_indirect_difference(pd.Series([0.9, 0.8], index=index), 0.85, 0.03)
    assert list(flag.index) == ["a", "b"] and flag.tolist() == [True, True]
