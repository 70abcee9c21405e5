"""The second-law split of a boiler: balances that must close and outside checks.

- Closure: fuel exergy + air exergy - water exergy gain = Σ destroyed + Σ lost (1e-9).
- Gouy-Stodola: T0 x (entropy generation from the entropy balance) = exergy destroyed, part
  by part (1e-9).
- First law against the heat-loss method: the split's energy imbalance equals
  m_f HHV (eta_1_indirect - eta_1_direct) when both see the same inputs.
- Independent numbers: the combustion destruction and the stack exergy of methane from
  Cantera's GRI-Mech 3.0 entropies; the stack chemical exergy from Szargut's table.
- A coal-fired worked example of our own, the water side computed in the test with the
  ``iapws`` package (IAPWS-IF97).
"""

from __future__ import annotations

import math

import cantera as ct
import numpy as np
import pandas as pd
import pytest

from engine import boiler_exergy_split as bx
from engine import chemical_exergy, combustion, gas, heatloss
from engine.fuels import FuelProperties, UltimateAnalysis

T0 = 298.15
P0 = 101_325.0
R = gas.R_J_PER_MOL_K
GRAPHITE_HHV = -gas.enthalpy_j_per_mol("CO2", 298.15) / gas.ATOMIC_MASS_KG_PER_MOL["C"]

COAL = FuelProperties.from_ultimate_analysis(
    "coal", UltimateAnalysis(0.62, 0.042, 0.075, 0.012, 0.011, 0.12, 0.12), hhv_j_per_kg=25.0e6
)
GAS = FuelProperties.from_gas("site gas", {"CH4": 0.93, "C2H6": 0.04, "N2": 0.02, "CO2": 0.01})


def _total(out: pd.DataFrame) -> np.ndarray:
    return (out["exergy_fuel_w"] + out["exergy_air_w"] - out["exergy_water_gain_w"]).to_numpy()


CASES = [
    # fuel, kwargs: a plain gas boiler; coal with an air heater, unburned carbon, warm
    # fuel and a per-row T0; a gas boiler whose water side claims too much heat.
    (GAS, {}),
    (
        COAL,
        {
            "burner_air_temperature_k": np.array([560.0, 600.0, 620.0]),
            "unburned_carbon_kg_per_kg": 0.006,
            "fuel_temperature_k": 313.15,
            "t0_k": np.array([283.15, 298.15, 308.15]),
            "surface_loss_fraction": 0.005,
            "o2_basis": "wet",
        },
    ),
    (GAS, {"surface_loss_fraction": 0.01, "surface_temperature_k": 340.0, "humidity_ratio": 0.0}),
]


@pytest.mark.parametrize(("fuel", "kwargs"), CASES)
@pytest.mark.parametrize("heat_factor", [0.97, 1.0, 1.03])
def test_closure_and_gouy_stodola(fuel, kwargs, heat_factor):
    m_f = np.array([2.0, 5.0, 8.0])
    q_w = m_f * fuel.hhv_j_per_kg * np.array([0.86, 0.89, 0.91]) * heat_factor
    out = bx.boiler_exergy_split(
        fuel, m_f, np.array([0.025, 0.035, 0.05]), np.array([400.0, 430.0, 460.0]), 300.0,
        q_w, 0.45 * q_w, **kwargs,
    )  # fmt: skip
    total = _total(out)
    parts = out[list(bx.DESTROYED_COLUMNS) + list(bx.LOST_COLUMNS)].sum(axis=1).to_numpy()
    assert parts == pytest.approx(total, rel=1e-9)
    t0 = np.broadcast_to(kwargs.get("t0_k", T0), 3)
    for destroyed, sgen in zip(bx.DESTROYED_COLUMNS, bx.SGEN_COLUMNS, strict=True):
        scale = np.abs(out[destroyed].to_numpy()) + 1e-9 * total
        assert (np.abs(t0 * out[sgen].to_numpy() - out[destroyed].to_numpy()) <= 1e-9 * scale).all()
    assert (t0 * out["sgen_w_per_k"]).to_numpy() == pytest.approx(
        out["exergy_destroyed_w"].to_numpy(), rel=1e-9
    )
    assert (out["exergy_destroyed_combustion_w"] > 0).all()
    assert (out["exergy_destroyed_heat_transfer_w"] > 0).all()


def test_energy_imbalance_matches_the_heat_loss_method():
    # Same inputs to both; PTC 4's unburned-carbon heating value replaced by graphite's
    # (the split's refuse is graphite) and no CO (the split assumes complete combustion).
    m_f, o2, t_fg, t_air, omega = (
        10.0,
        np.array([0.03, 0.045]),
        np.array([410.0, 440.0]),
        300.0,
        0.011,
    )
    kwargs = {
        "unburned_carbon_kg_per_kg": 0.006,
        "surface_loss_fraction": 0.004,
        "humidity_ratio": omega,
    }
    indirect = heatloss.heat_loss_efficiency(
        COAL, o2, t_fg, t_air, unburned_carbon_hhv_j_per_kg=GRAPHITE_HHV, **kwargs
    )["eta_1_indirect"].to_numpy()
    eta_direct = np.array([0.87, 0.85])
    q_w = m_f * COAL.hhv_j_per_kg * eta_direct
    out = bx.boiler_exergy_split(COAL, m_f, o2, t_fg, t_air, q_w, 0.42 * q_w, **kwargs)
    expected = m_f * COAL.hhv_j_per_kg * (indirect - eta_direct)
    assert out["energy_imbalance_w"].to_numpy() == pytest.approx(
        expected, abs=1e-9 * m_f * COAL.hhv_j_per_kg
    )
    # With the water side at the indirect efficiency nothing is unaccounted.
    q_w = m_f * COAL.hhv_j_per_kg * indirect
    out = bx.boiler_exergy_split(COAL, m_f, o2, t_fg, t_air, q_w, 0.42 * q_w, **kwargs)
    unaccounted = np.abs(out["exergy_destroyed_unaccounted_w"].to_numpy())
    assert (unaccounted <= 1e-9 * out["exergy_fuel_w"].to_numpy()).all()


def _methane_case():
    methane = FuelProperties.from_gas("methane", {"CH4": 1.0})
    excess, t_fg, t_air = 0.15, 420.0, 298.15
    ultimate = methane.ultimate
    o2 = combustion.o2_from_excess_air(excess, ultimate, "dry")
    m_f = 1.0
    q_w = 0.9 * methane.hhv_j_per_kg
    out = bx.boiler_exergy_split(methane, m_f, o2, t_fg, t_air, q_w, 0.4 * q_w, humidity_ratio=0.0)
    return methane, excess, t_fg, out.iloc[0]


def test_combustion_destruction_against_cantera_entropies():
    # Independent: T0 [S_products(T_ad) - S_CH4 - S_air], all from GRI-Mech 3.0 entropies
    # at partial pressures (ideal gas at p0), for 1 kg of CH4 at 298.15 K in dry air.
    methane, excess, _, ours = _methane_case()
    x = combustion.DRY_AIR_MOLE_FRACTIONS
    n_fuel = 1.0 / gas.molar_mass_kg_per_mol("CH4")
    air = n_fuel * 2 * (1 + excess) / x["O2"]
    gri = ct.Solution("gri30.yaml")

    def entropy(amounts: dict[str, float], t: float) -> float:
        n = sum(amounts.values())
        gri.TPX = t, P0, {("AR" if k == "Ar" else k): v for k, v in amounts.items()}
        return gri.entropy_mole / 1e3 * n

    products = {"CO2": n_fuel + air * x["CO2"], "H2O": 2 * n_fuel, "O2": 2 * excess * n_fuel}
    products |= {"N2": air * x["N2"], "Ar": air * x["Ar"]}
    air_amounts = {k: air * v for k, v in x.items()}
    t_ad = ours["adiabatic_flame_temperature_k"]
    sgen = entropy(products, t_ad) - entropy({"CH4": n_fuel}, T0) - entropy(air_amounts, T0)
    # 0.5 %: Szargut's CH4 exergy vs GRI Gibbs energies (0.03 %), flame temperature (1 K).
    assert ours["exergy_destroyed_combustion_w"] == pytest.approx(T0 * sgen, rel=5e-3)
    # Plausibility, common practice (textbook boiler analyses such as Kotas 1995, Ch. 4):
    # adiabatic combustion of a hydrocarbon with cold air destroys about 25-35 % of the
    # fuel exergy.
    assert 0.25 < ours["exergy_destroyed_combustion_w"] / ours["exergy_fuel_w"] < 0.35


def test_stack_exergy_against_hand_calculations():
    methane, excess, t_fg, ours = _methane_case()
    fg = combustion.flue_gas(methane.ultimate, excess, 0.0)
    n = {k: float(v) for k, v in fg.amounts_mol_per_kg.items() if float(v) > 0}
    total = sum(n.values())
    # Chemical: Σ n_i (e_i + R T0 ln x_i), Szargut 1988 table, water kept as vapour.
    table = chemical_exergy.STANDARD_CHEMICAL_EXERGY_J_PER_MOL
    chemical = sum(v * (table[k] + R * T0 * math.log(v / total)) for k, v in n.items())
    assert ours["exergy_lost_stack_chemical_w"] == pytest.approx(chemical, rel=5e-3)
    # Thermal: Σ n_i [(h_i(T) - h_i(T0)) - T0 (s°_i(T) - s°_i(T0))], GRI-Mech 3.0 data.
    species = {s.name: s for s in ct.Species.list_from_file("gri30.yaml")}
    thermal = 0.0
    for k, v in n.items():
        th = species["AR" if k == "Ar" else k].thermo
        thermal += v * ((th.h(t_fg) - th.h(T0)) - T0 * (th.s(t_fg) - th.s(T0))) / 1e3
    assert ours["exergy_lost_stack_thermal_w"] == pytest.approx(thermal, rel=5e-3)


def test_unburned_and_surface_losses_hand_calculation():
    out = bx.boiler_exergy_split(
        COAL, 10.0, 0.035, 420.0, 300.0, 2.2e8, 0.9e8,
        unburned_carbon_kg_per_kg=0.008, surface_loss_fraction=0.005, surface_temperature_k=330.0,
    ).iloc[0]  # fmt: skip
    # Graphite at T0: its standard chemical exergy, 410.26 kJ/mol (Szargut 1988).
    assert out["exergy_lost_unburned_w"] == pytest.approx(
        10.0 * 0.008 / 12.011e-3 * 410_260.0, rel=1e-9
    )
    assert out["exergy_lost_surface_w"] == pytest.approx(
        10.0 * 0.005 * 25.0e6 * (1 - T0 / 330.0), rel=1e-12
    )


def test_coal_worked_example_step_by_step():
    # Fictional unit of our own: 12 kg/s of the coal above (25.0 MJ/kg HHV), 3.5 % O2 dry
    # and 140 degC at the air-heater outlet, air in at 30 degC (0.012 kg/kg) and heated to
    # 300 degC, 0.4 % surface loss, refuse carbon as in test_heatloss. Water side: feed
    # water 250 degC at 18 MPa to main steam 540 degC at 17 MPa, the flow such that the
    # water takes the heat the heat-loss method leaves (no unaccounted heat).
    from iapws import IAPWS97

    m_f, o2, t_fg, t_air, omega, t_hot = 12.0, 0.035, 413.15, 303.15, 0.012, 573.15
    ubc = heatloss.unburned_carbon_from_refuse(0.12, 0.05, 0.10, 0.8)
    kwargs = {
        "humidity_ratio": omega,
        "unburned_carbon_kg_per_kg": ubc,
        "surface_loss_fraction": 0.004,
    }
    # Step 1: heat to the water by the heat-loss method (graphite heating value for the
    # refuse carbon so that both methods count the same energy).
    eta = heatloss.heat_loss_efficiency(
        COAL, o2, t_fg, t_air, unburned_carbon_hhv_j_per_kg=GRAPHITE_HHV, **kwargs
    )["eta_1_indirect"].iloc[0]
    q_w = m_f * COAL.hhv_j_per_kg * eta
    # Step 2: steam flow and exergy gain with IAPWS-IF97 (iapws package), T0 = 25 degC.
    feed, steam_out = IAPWS97(P=18.0, T=523.15), IAPWS97(P=17.0, T=813.15)
    dh = (steam_out.h - feed.h) * 1e3
    ds = (steam_out.s - feed.s) * 1e3
    m_s = q_w / dh
    ex_w = m_s * (dh - T0 * ds)
    # Step 3: the split.
    out = bx.boiler_exergy_split(
        COAL, m_f, o2, t_fg, t_air, q_w, ex_w, burner_air_temperature_k=t_hot, **kwargs
    ).iloc[0]
    assert 100.0 < m_s < 130.0  # a unit of about 115 kg/s of steam
    assert out["exergy_fuel_w"] == pytest.approx(m_f * COAL.chemical_exergy_j_per_kg, rel=1e-12)
    assert out["energy_imbalance_w"] == pytest.approx(0.0, abs=1e-9 * q_w)
    parts = [out[c] for c in bx.DESTROYED_COLUMNS + bx.LOST_COLUMNS]
    assert sum(parts) == pytest.approx(_total(out.to_frame().T)[0], rel=1e-9)
    assert out["exergy_destroyed_w"] == pytest.approx(T0 * out["sgen_w_per_k"], rel=1e-9)
    # Plausibility, common practice for a coal boiler (textbook figures of this order):
    # eta_2 near 0.45-0.55, combustion destroying about 25-35 % and heat
    # transfer 15-30 % of the fuel exergy, the stack losing a few per cent.
    fuel = out["exergy_fuel_w"]
    assert 0.45 < ex_w / fuel < 0.55
    assert 0.25 < out["exergy_destroyed_combustion_w"] / fuel < 0.35
    assert 0.15 < out["exergy_destroyed_heat_transfer_w"] / fuel < 0.30
    assert (
        0.01
        < (out["exergy_lost_stack_thermal_w"] + out["exergy_lost_stack_chemical_w"]) / fuel
        < 0.06
    )


def test_series_index_nan_row_and_refused_fuel():
    index = pd.date_range("2026-03-01", periods=3, freq="min", tz="UTC")
    m_f = pd.Series([5.0, np.nan, 5.0], index=index)
    out = bx.boiler_exergy_split(GAS, m_f, 0.03, 420.0, 300.0, 2.2e8, 1.0e8)
    assert out.index.equals(index)
    # Flows in W need the fuel flow; per-kg results (excess air, flame temperature) do not.
    watts = [c for c in out.columns if c.endswith("_w") or c.endswith("_w_per_k")]
    assert out[watts].iloc[1].isna().all()
    assert np.isfinite(out["adiabatic_flame_temperature_k"].iloc[1])
    assert np.isfinite(out.iloc[[0, 2]].to_numpy()).all()
    with pytest.raises(ValueError, match="has no composition"):
        bx.boiler_exergy_split(FuelProperties("gas", 50e6), 1.0, 0.03, 420.0, 300.0, 4e7, 2e7)
