"""The boiler kind with its flue-gas roles bound: heat-loss method, reconciliation, split.

Outside references, named beside each check:
- Heat-loss method: the boiler model must reproduce :func:`engine.heatloss.heat_loss_efficiency`
  called directly with the same inputs (its own tests check it against Cantera and a
  hand-worked coal example), and the PTC 4 identity eta_1_indirect = 1 - Σ losses +
  Σ credits (ASME PTC 4-2013, energy balance method).
- The natural-gas example: an energy balance written in the test with Cantera 3.2's
  GRI-Mech 3.0 enthalpies (n-butane from Cantera's nasa_gas.yaml), excess air from the
  wet O2 by a closed form derived in the test, and the fuel's chemical exergy from
  Szargut, Morris & Steward 1988, Appendix Table I (tests/data, values from memory) with
  the ideal mixing term.
- The coal example: the Szargut-Styrylska ratio evaluated by hand (Szargut et al. 1988
  Sec. 2.5; coefficients from memory), the humidity ratio from IAPWS-IF97 saturation
  pressure (`iapws` package), the unburned carbon from the refuse by hand (PTC 4 form).
- Balances that must close (1e-9 relative): the split's parts add up to the exergy
  supplied minus the water's exergy gain; T0 x entropy generation (entropy balance)
  equals it too (Gouy-Stodola, Bejan, Tsatsaronis & Moran 1996, Eq. 3.24).

Tolerances: identities of the same arithmetic at 1e-12; balances closing through
different routes at 1e-9; Cantera's GRI-Mech and TM-4513 data at 5e-4 in efficiency (the
data sets differ by up to ~0.1 % in sensible enthalpy); hand calculations that use a
slightly different vaporisation enthalpy at 1e-3.
"""

from __future__ import annotations

import math
from pathlib import Path

import cantera as ct
import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from iapws import IAPWS97

from engine import boiler_exergy_split as bx
from engine import combustion, gas, heatloss
from engine.catalogue import ModelContext
from engine.checks import Flag
from engine.deadstate import dead_state
from engine.fuels import FuelProperties, UltimateAnalysis
from engine.units import _boiler_indirect as indirect
from engine.units.boiler import KIND, boiler_direct
from tests.engine.test_boiler import consistent_boiler_row

DATA = Path(__file__).resolve().parents[1] / "data"
R = gas.R_J_PER_MOL_K
LOSSES = list(heatloss.LOSS_COLUMNS)
CREDITS = list(heatloss.CREDIT_COLUMNS)
PARTS = list(indirect.SPLIT_PARTS)
NEW_COLUMNS = [c.name for c in indirect.HEAT_LOSS_RESULTS + indirect.SPLIT_RESULTS]

# --- the coal-fired example: a fictional 350 t/h reheat unit of our own -----------------
# Coal as fired (our invention, of the size of a high-volatile bituminous coal): C 65.5 %,
# H 4.3 %, O 7.2 %, N 1.3 %, S 0.9 %, ash 9.8 %, moisture 11.0 %; HHV measured 26.4 MJ/kg.
COAL_ANALYSIS = UltimateAnalysis(0.655, 0.043, 0.072, 0.013, 0.009, 0.098, 0.110)
COAL = FuelProperties.from_ultimate_analysis(
    "fictional bituminous coal", COAL_ANALYSIS, hhv_j_per_kg=26.4e6
)
COAL_T0_K = 288.15  # a 15 degC dead state, to keep T0 and the 25 degC reference apart
COAL_PARAMS = {
    "carbon_in_fly_ash": 0.04,
    "carbon_in_bottom_ash": 0.08,
    "fly_ash_fraction": 0.85,
    "surface_loss_fraction": 0.004,
}
COAL_ROW = {
    # water side: feedwater 17.8 MPa / 252 degC to main steam 16.8 MPa / 540 degC,
    # reheat 3.6 MPa / 335 degC to 3.4 MPa / 540 degC at 88 % of the main steam.
    "feedwater_flow": 97.0,
    "feedwater_pressure": 17.8e6,
    "feedwater_temperature": 525.15,
    "steam_flow": 97.0,
    "steam_pressure": 16.8e6,
    "steam_temperature": 813.15,
    "reheat_flow": 0.88 * 97.0,
    "reheat_in_pressure": 3.6e6,
    "reheat_in_temperature": 608.15,
    "reheat_out_pressure": 3.4e6,
    "reheat_out_temperature": 813.15,
    # gas side: 3.4 % O2 dry and 138 degC at the air-heater gas outlet, 120 ppm CO dry;
    # air in at 28 degC, 60 % RH, heated to 300 degC; coal at 35 degC.
    "flue_gas_o2": 0.034,
    "flue_gas_temperature": 411.15,
    "combustion_air_temperature": 301.15,
    "air_relative_humidity": 0.60,
    "flue_gas_co": 120e-6,
    "fuel_temperature": 308.15,
    "burner_air_temperature": 573.15,
}

# --- the natural-gas example: a fictional packaged boiler of our own --------------------
# Pipeline gas (our invention, of the usual size): CH4 91.5 %, C2H6 4.5 %, C3H8 1.2 %,
# n-C4H10 0.3 %, N2 1.5 %, CO2 1.0 % by mole; metered in normal cubic metres (0 degC).
GAS_X = {"CH4": 0.915, "C2H6": 0.045, "C3H8": 0.012, "C4H10": 0.003, "N2": 0.015, "CO2": 0.010}
GAS = FuelProperties.from_gas("fictional pipeline gas", GAS_X)
GAS_PARAMS = {"surface_loss_fraction": 0.008, "rated_heat_output_w": 80e6}
GAS_ROW = {
    # 25 kg/s of steam at 4.2 MPa / 400 degC from feedwater at 4.6 MPa / 105 degC, 0.4 kg/s
    # continuous blowdown from a 4.4 MPa drum; in-situ (wet) O2 2.2 % and 150 degC after
    # the economiser (no air heater), air at 20 degC.
    "feedwater_flow": 25.4,
    "feedwater_pressure": 4.6e6,
    "feedwater_temperature": 378.15,
    "steam_flow": 25.0,
    "steam_pressure": 4.2e6,
    "steam_temperature": 673.15,
    "blowdown_flow": 0.4,
    "drum_pressure": 4.4e6,
    "flue_gas_o2": 0.022,
    "flue_gas_temperature": 423.15,
    "combustion_air_temperature": 293.15,
}
WET = {"o2_basis": "wet"}


def _context(fuel, t0_k=298.15, text=None) -> ModelContext:
    return ModelContext(dead_state(t0_k), fuel, text_parameters=text or {})


def _run(row, params, context, **changes) -> pd.Series:
    return boiler_direct(pd.DataFrame([dict(row, **changes)]), params, context).iloc[0]


def _consistent(row, params, context, **changes) -> dict:
    """The row with the fuel flow the heat-loss method implies for its heat absorbed."""
    probe = _run(dict(row, fuel_mass_flow=1.0), params, context, **changes)
    m_f = probe["heat_absorbed_w"] / (probe["eta_1_indirect"] * context.fuel.hhv_j_per_kg)
    return dict(row, fuel_mass_flow=m_f, **changes)


def _heat_loss_direct(fuel, row, **kwargs) -> pd.Series:
    """H2's heat-loss function called directly with the boiler's inputs."""
    out = heatloss.heat_loss_efficiency(
        fuel,
        row["flue_gas_o2"],
        row["flue_gas_temperature"],
        row["combustion_air_temperature"],
        **kwargs,
    )
    return out.iloc[0]


# --- coal: the heat-loss method end to end -------------------------------------------


@pytest.fixture(scope="module")
def coal_case():
    context = _context(COAL, COAL_T0_K)
    row = _consistent(COAL_ROW, COAL_PARAMS, context)
    return row, _run(row, COAL_PARAMS, context)


def _coal_unburned_carbon() -> float:
    # PTC 4 (Sec. 5.14, unburned carbon in residue): each refuse stream carries its share
    # of the ash plus the carbon making its carbon fraction; by hand.
    return 0.098 * (0.85 * 0.04 / 0.96 + 0.15 * 0.08 / 0.92)


def _coal_humidity_ratio() -> float:
    # ω = (M_w / M_a) p_v / (p - p_v), p_v = RH p_sat(T) with the IAPWS-IF97 saturation
    # pressure from the `iapws` package; M_w = 18.015, M_a = 28.965 g/mol (dry air).
    p_v = 0.60 * IAPWS97(T=301.15, x=0).P * 1e6
    return 18.015 / 28.965 * p_v / (101_325.0 - p_v)


def test_coal_inputs_by_hand():
    assert _coal_unburned_carbon() == pytest.approx(0.0047491, rel=1e-4)
    omega = combustion.humidity_ratio_from_relative_humidity(0.60, 301.15, 101_325.0)
    assert omega == pytest.approx(_coal_humidity_ratio(), rel=1e-4)
    assert omega == pytest.approx(0.01427, rel=2e-3)  # psychrometric chart, from memory


def test_coal_losses_equal_the_heat_loss_method_called_directly(coal_case):
    row, out = coal_case
    reference = _heat_loss_direct(
        COAL,
        row,
        o2_basis="dry",
        humidity_ratio=combustion.humidity_ratio_from_relative_humidity(0.60, 301.15, 101_325.0),
        fuel_temperature_k=308.15,
        co_ppm=120.0,
        unburned_carbon_kg_per_kg=_coal_unburned_carbon(),
        surface_loss_fraction=0.004,
    )
    for name in ["excess_air", "eta_1_indirect", "eta_1_indirect_lhv", *LOSSES, *CREDITS]:
        assert out[name] == pytest.approx(reference[name], rel=1e-12, abs=1e-15), name
    # The unburned-carbon loss by hand: m_ubc x 14,500 Btu/lb (PTC 4 value) / HHV.
    assert out["loss_unburned_carbon"] == pytest.approx(
        _coal_unburned_carbon() * 14_500.0 * 2_326.0 / 26.4e6, rel=1e-12
    )
    assert out["loss_co"] > 0.0 and out["credit_fuel_sensible"] > 0.0


def test_coal_losses_and_efficiency_sum_to_one(coal_case):
    # PTC 4 energy balance method: eta = 1 - Σ losses + Σ credits (fractions of HHV input).
    _, out = coal_case
    total = out["eta_1_indirect"] + out[LOSSES].sum() - out[CREDITS].sum()
    assert total == pytest.approx(1.0, abs=1e-14)
    # Plausibility of our scenario, common practice for a pulverised-coal boiler:
    # eta_1 (HHV) 0.85-0.90, dry-gas loss 4-6 %, hydrogen-water loss 3.5-4.5 %.
    assert 0.85 < out["eta_1_indirect"] < 0.90
    assert 0.04 < out["loss_dry_flue_gas"] < 0.06
    assert 0.035 < out["loss_hydrogen_water"] < 0.045


def test_coal_consistent_fuel_flow_agrees_and_raises_no_flag(coal_case):
    _, out = coal_case
    assert out["direct_minus_indirect"] == pytest.approx(0.0, abs=1e-12)
    assert out["eta_1"] == pytest.approx(out["eta_1_indirect"], rel=1e-12)
    assert int(out["flags"]) == Flag.NONE


def test_coal_fuel_chemical_exergy_by_szargut_styrylska(coal_case):
    row, out = coal_case
    # Szargut et al. 1988 Sec. 2.5 (coefficients from memory), solid fuel, o/c < 0.667:
    # β = 1.0437 + 0.1882 h/c + 0.0610 o/c + 0.0404 n/c on the organic matter;
    # e = β (LHV + r w) + (e_S - LHV_S) s + e_w w. r = 2441.7 kJ/kg (IAPWS-IF97 h_fg at
    # 25 degC, iapws), e_S = 609.6 kJ/mol (Table I), LHV_S = 296.84 kJ/mol (heat of
    # formation of SO2, CODATA), e_w = 0.9 kJ/mol (Table I, liquid water).
    c, h, o, n, s, w = 0.655, 0.043, 0.072, 0.013, 0.009, 0.110
    r = (IAPWS97(T=298.15, x=1).h - IAPWS97(T=298.15, x=0).h) * 1e3
    lhv = 26.4e6 - r * (h * 18.015 / 2.016 + w)
    beta = 1.0437 + 0.1882 * h / c + 0.0610 * o / c + 0.0404 * n / c
    e = beta * (lhv + r * w) + (609.6e3 - 296.84e3) / 32.06e-3 * s + 900.0 / 18.015e-3 * w
    assert out["fuel_exergy_w"] == pytest.approx(row["fuel_mass_flow"] * e, rel=1e-3)
    # ... and exactly the composition-based value of the fuel specification (no ratio).
    assert out["fuel_exergy_w"] == pytest.approx(
        row["fuel_mass_flow"] * COAL.chemical_exergy_j_per_kg, rel=1e-12
    )


def test_coal_split_closes_and_matches_gouy_stodola(coal_case):
    _, out = coal_case
    total = out["exergy_supplied_w"] - out["water_exergy_gain_w"]
    assert out["exergy_destroyed_and_lost_w"] == pytest.approx(total, rel=1e-12)
    assert out[PARTS].sum() == pytest.approx(total, rel=1e-9)
    assert COAL_T0_K * out["sgen_w_per_k"] == pytest.approx(total, rel=1e-9)
    assert out["lost_work_w"] == pytest.approx(total, rel=1e-9)
    assert out["eta_2"] == pytest.approx(
        out["water_exergy_gain_w"] / out["exergy_supplied_w"], rel=1e-12
    )
    # Plausibility, common practice for a coal boiler (textbook figures of this order):
    # eta_2 0.40-0.50 at a 15 degC dead state with reheat, combustion destroying 25-35 %
    # of the fuel exergy, heat transfer 15-30 %, the stack losing a few per cent.
    f = out["fuel_exergy_w"]
    assert 0.40 < out["eta_2"] < 0.50
    assert 0.25 < out["exergy_destroyed_combustion_w"] / f < 0.35
    assert 0.15 < out["exergy_destroyed_heat_transfer_w"] / f < 0.30
    stack = out["exergy_lost_stack_thermal_w"] + out["exergy_lost_stack_chemical_w"]
    assert 0.01 < stack / f < 0.06


def test_coal_split_equals_the_split_called_directly(coal_case):
    row, out = coal_case
    ref = bx.boiler_exergy_split(
        COAL,
        row["fuel_mass_flow"],
        row["flue_gas_o2"],
        row["flue_gas_temperature"],
        row["combustion_air_temperature"],
        out["heat_absorbed_w"],
        out["water_exergy_gain_w"],
        humidity_ratio=combustion.humidity_ratio_from_relative_humidity(0.60, 301.15, 101_325.0),
        t0_k=COAL_T0_K,
        fuel_temperature_k=308.15,
        burner_air_temperature_k=573.15,
        surface_loss_fraction=0.004,
        unburned_carbon_kg_per_kg=_coal_unburned_carbon(),
    ).iloc[0]
    for name in PARTS:
        assert out[name] == pytest.approx(ref[name], rel=1e-12), name
    assert out["exergy_supplied_w"] == pytest.approx(
        ref["exergy_fuel_w"] + ref["exergy_air_w"], rel=1e-12
    )
    assert out["unaccounted_heat_w"] == pytest.approx(ref["energy_imbalance_w"], rel=1e-12)


def test_coal_unaccounted_heat_is_what_the_split_does_not_model(coal_case):
    # With the fuel flow the heat-loss method implies, the only heat the split cannot
    # place is what its gas model leaves out: the CO loss (it burns all carbon to CO2) and
    # PTC 4's unburned-carbon heating value (33.73 MJ/kg) against graphite's own (from
    # the gas data, -h_f(CO2) / M_C), and the refuse carbon leaving with its sensible heat
    # at the fuel temperature (PTC 4's refuse sensible heat, which the heat-loss method
    # here leaves out; graphite's heat capacity from engine.gas). First law, per kg:
    row, out = coal_case
    m_f, hhv = row["fuel_mass_flow"], 26.4e6
    graphite = -float(gas.enthalpy_j_per_mol("CO2", 298.15)) / 12.011e-3
    sensible = gas.CONDENSED_PHASES["C(gr)"].cp_j_per_mol_k * (308.15 - 298.15) / 12.011e-3
    expected = m_f * (
        hhv * out["loss_co"] + _coal_unburned_carbon() * (14_500.0 * 2_326.0 - graphite - sensible)
    )
    assert out["unaccounted_heat_w"] == pytest.approx(expected, abs=1e-9 * m_f * hhv)
    assert out["exergy_destroyed_unaccounted_w"] > 0.0


@pytest.mark.parametrize(
    "meter, direct_minus_indirect_factor, flags",
    [
        # The fuel meter reads 5 % high: eta_1 falls to eta_indirect / 1.05.
        (1.05, 1 / 1.05 - 1, Flag.DIRECT_INDIRECT_DISAGREE),
        # It reads 5 % low: eta_1 rises to eta_indirect / 0.95, the water side claims
        # more heat than the gas gave, and the split needs negative destruction.
        (0.95, 1 / 0.95 - 1, Flag.DIRECT_INDIRECT_DISAGREE | Flag.NEGATIVE_UNACCOUNTED_DESTRUCTION),
        # Within the 2 % tolerance (common practice) either way: no flag.
        (1.015, 1 / 1.015 - 1, Flag.NONE),
        (0.985, 1 / 0.985 - 1, Flag.NONE),
    ],
)
def test_coal_fuel_meter_error_is_flagged(coal_case, meter, direct_minus_indirect_factor, flags):
    row, consistent = coal_case
    out = _run(
        row,
        COAL_PARAMS,
        _context(COAL, COAL_T0_K),
        fuel_mass_flow=meter * row["fuel_mass_flow"],
    )
    eta_indirect = consistent["eta_1_indirect"]
    assert out["eta_1_indirect"] == pytest.approx(eta_indirect, rel=1e-12)
    assert out["direct_minus_indirect"] == pytest.approx(
        eta_indirect * direct_minus_indirect_factor, rel=1e-9
    )
    assert Flag(int(out["flags"])) == flags
    assert out[PARTS].sum() == pytest.approx(out["exergy_destroyed_and_lost_w"], rel=1e-9)
    assert COAL_T0_K * out["sgen_w_per_k"] == pytest.approx(
        out["exergy_destroyed_and_lost_w"], rel=1e-9
    )


def test_tolerance_parameter_sets_the_disagreement_threshold(coal_case):
    row, _ = coal_case
    params = dict(COAL_PARAMS, direct_indirect_tolerance=0.05)
    out = _run(row, params, _context(COAL, COAL_T0_K), fuel_mass_flow=1.05 * row["fuel_mass_flow"])
    assert int(out["flags"]) == Flag.NONE  # |difference| is 0.042 < 0.05


# --- natural gas -----------------------------------------------------------------------


@pytest.fixture(scope="module")
def gas_case():
    context = _context(GAS, text=WET)
    row = _consistent(GAS_ROW, GAS_PARAMS, context)
    return row, _run(row, GAS_PARAMS, context)


def _gas_per_mole_fuel(omega: float, y_o2_wet: float) -> dict:
    """Closed-form stoichiometry per mole of the gas, derived here.

    O2 needed: Σ x (c + h/4). Per mole of dry air, x_O2 = 0.209476 (U.S. Standard
    Atmosphere 1976) and φ = ω M_a / M_w mol of water. With air factor λ the wet flue gas
    holds (λ - 1) O_th of O2 in P + λ A (1 + φ) - O_th moles (P the CO2, H2O and N2 from
    the fuel, A = O_th / x_O2), so y = (λ - 1) O_th / (P + λ A (1 + φ) - O_th), linear in λ.
    """
    atoms = {"CH4": (1, 4), "C2H6": (2, 6), "C3H8": (3, 8), "C4H10": (4, 10)}
    o_th = sum(GAS_X[k] * (c + h / 4) for k, (c, h) in atoms.items())
    co2_f = sum(GAS_X[k] * c for k, (c, _) in atoms.items()) + GAS_X["CO2"]
    h2o_f = sum(GAS_X[k] * h / 2 for k, (_, h) in atoms.items())
    p = co2_f + h2o_f + GAS_X["N2"]
    x_air = combustion.DRY_AIR_MOLE_FRACTIONS
    a = o_th / x_air["O2"]
    phi = omega * 28.9647e-3 / 18.015e-3
    lam = (o_th + y_o2_wet * (p - o_th)) / (o_th - y_o2_wet * a * (1 + phi))
    air = lam * a
    products = {
        "CO2": co2_f + air * x_air["CO2"],
        "H2O": h2o_f + air * phi,
        "N2": GAS_X["N2"] + air * x_air["N2"],
        "O2": (lam - 1) * o_th,
        "Ar": air * x_air["Ar"],
    }
    air_amounts = {k: air * v for k, v in x_air.items()} | {"H2O": air * phi}
    return {"excess": lam - 1, "products": products, "air": air_amounts, "o_th": o_th}


def test_gas_excess_air_from_wet_o2_by_closed_form(gas_case):
    _, out = gas_case
    # Molar masses differ in the 5th digit between the test's M_a and the module's; the
    # excess air follows to about 1e-6.
    hand = _gas_per_mole_fuel(0.013, 0.022)
    assert out["excess_air"] == pytest.approx(hand["excess"], rel=1e-5)
    assert 0.10 < out["excess_air"] < 0.15  # 2.2 % wet (2.6 % dry) O2 on natural gas


def test_gas_efficiency_against_a_cantera_energy_balance(gas_case):
    # Energy balance per mole of gas with Cantera data: heat to the water = H(fuel at
    # 25 degC) + H(moist air at 20 degC) - H(flue gas at 150 degC) - surface loss; over the
    # HHV (from the same data, water condensed) it is the efficiency by the heat-loss
    # method with a 25 degC reference (ASME PTC 4 energy balance).
    row, out = gas_case
    gri = {s.name: s for s in ct.Species.list_from_file("gri30.yaml")}
    nasa = {s.name: s for s in ct.Species.list_from_file("nasa_gas.yaml")}
    liquid = {s.name: s for s in ct.Species.list_from_file("nasa_condensed.yaml")}["H2O(L)"]
    table = {k: gri[k] for k in ("CH4", "C2H6", "C3H8", "N2", "CO2", "O2", "H2O")}
    table |= {"Ar": gri["AR"], "C4H10": nasa["C4H10,n-butane"], "H2O(l)": liquid}

    def h(species, t):
        return table[species].thermo.h(t) / 1e3

    hand = _gas_per_mole_fuel(0.013, 0.022)
    t_ref, t_air, t_fg = 298.15, 293.15, 423.15
    h_fuel = sum(x * h(k, t_ref) for k, x in GAS_X.items())
    h_air = sum(n * h(k, t_air) for k, n in hand["air"].items())
    h_out = sum(n * h(k, t_fg) for k, n in hand["products"].items())
    # HHV: the combustibles burnt at 25 degC to CO2 and liquid water (inerts unchanged).
    atoms = {"CH4": (1, 4), "C2H6": (2, 6), "C3H8": (3, 8), "C4H10": (4, 10)}
    hhv = sum(
        GAS_X[k] * (h(k, t_ref) - c * h("CO2", t_ref) - hh / 2 * h("H2O(l)", t_ref))
        for k, (c, hh) in atoms.items()
    ) + hand["o_th"] * h("O2", t_ref)
    # Surface loss at part load (common practice): constant watts, fraction 0.8 % x
    # rated / actual heat output.
    surface = 0.008 * 80e6 / out["heat_absorbed_w"]
    assert out["loss_surface"] == pytest.approx(surface, rel=1e-12)
    eta = (h_fuel + h_air - h_out) / hhv - surface
    assert out["eta_1_indirect"] == pytest.approx(eta, abs=5e-4)
    assert out["fuel_heat_input_hhv_w"] / row["fuel_mass_flow"] == pytest.approx(
        hhv / (sum(x * gas.molar_mass_kg_per_mol(k) for k, x in GAS_X.items())), rel=3e-3
    )


@pytest.fixture(scope="module")
def szargut_1988_table() -> dict[str, float]:
    # Szargut, Morris & Steward 1988, Appendix Table I, values from memory (tests/data).
    frame = pd.read_csv(DATA / "combustion_szargut_1988_chemical_exergy.csv")
    return dict(zip(frame["species"], frame["exergy_kj_per_mol"] * 1e3, strict=True))


def test_gas_fuel_chemical_exergy_from_szargut_table(gas_case, szargut_1988_table):
    row, out = gas_case
    # e = Σ x_i e_i + R T0 Σ x_i ln x_i per mole (Szargut 1988 Sec. 2.4), over M.
    per_mol = sum(x * szargut_1988_table[k] for k, x in GAS_X.items())
    per_mol += R * 298.15 * sum(x * math.log(x) for x in GAS_X.values())
    molar_mass = (
        (0.915 * 16.043 + 0.045 * 30.070 + 0.012 * 44.097 + 0.003 * 58.123)
        + 0.015 * 28.014
        + 0.010 * 44.009
    )  # g/mol, IUPAC atomic weights
    assert out["fuel_exergy_w"] == pytest.approx(
        row["fuel_mass_flow"] * per_mol / (molar_mass * 1e-3), rel=1e-5
    )
    # Szargut 1988 Table 2.4 (from memory): natural gas has e/LHV of about 1.04.
    assert out["fuel_exergy_w"] / out["fuel_heat_input_lhv_w"] == pytest.approx(1.04, abs=0.01)


def test_gas_volume_flow_and_balances(gas_case):
    row, out = gas_case
    # The same fuel metered by volume at 0 degC, 101.325 kPa (DIN 1343): ρ = p M / (R T).
    density = 101_325.0 * gas.mean_molar_mass_kg_per_mol(GAS_X) / (R * 273.15)
    by_volume = {k: v for k, v in row.items() if k != "fuel_mass_flow"}
    by_volume["fuel_volume_flow"] = row["fuel_mass_flow"] / density
    again = _run(by_volume, GAS_PARAMS, _context(GAS, text=WET))
    for name in ["eta_1", "eta_1_indirect", "exergy_destroyed_combustion_w", "sgen_w_per_k"]:
        assert again[name] == pytest.approx(out[name], rel=1e-12), name
    total = out["exergy_supplied_w"] - out["water_exergy_gain_w"]
    assert out[PARTS].sum() == pytest.approx(total, rel=1e-9)
    assert 298.15 * out["sgen_w_per_k"] == pytest.approx(total, rel=1e-9)
    balance = out["eta_1_indirect"] + out[LOSSES].sum() - out[CREDITS].sum()
    assert balance == pytest.approx(1.0, abs=1e-14)
    assert out["loss_fuel_moisture"] == 0.0 and out["loss_unburned_carbon"] == 0.0
    assert out["exergy_lost_unburned_w"] == 0.0
    assert int(out["flags"]) == Flag.NONE


def test_wet_and_dry_o2_of_the_same_flue_gas_agree(gas_case):
    # The wet O2 of the example turned into its dry equivalent (water removed) must give
    # the same boiler: dry O2 = wet O2 / (1 - x_H2O,wet), per the closed form above.
    row, out = gas_case
    hand = _gas_per_mole_fuel(0.013, 0.022)
    total = sum(hand["products"].values())
    dry_o2 = 0.022 / (1.0 - hand["products"]["H2O"] / total)
    dry = _run(row, GAS_PARAMS, _context(GAS), flue_gas_o2=dry_o2)
    assert dry["excess_air"] == pytest.approx(out["excess_air"], rel=1e-5)
    assert dry["eta_1_indirect"] == pytest.approx(out["eta_1_indirect"], abs=1e-7)


# --- direct-only configuration, bad rows and configuration --------------------------------


def test_without_flue_gas_roles_the_new_columns_are_nan():
    row = {k: v for k, v in GAS_ROW.items() if k not in indirect.CORE_ROLES}
    out = _run(dict(row, fuel_mass_flow=1.6), {}, _context(GAS))
    assert out[NEW_COLUMNS].isna().all()
    assert out["exergy_supplied_w"] == out["fuel_exergy_w"]
    assert out["eta_2"] == pytest.approx(out["water_exergy_gain_w"] / out["fuel_exergy_w"])
    assert out["lost_work_w"] == pytest.approx(out["exergy_destroyed_and_lost_w"], rel=1e-9)
    assert int(out["flags"]) == Flag.NONE


def test_bad_flue_gas_row_keeps_its_direct_results(gas_case):
    row, good = gas_case
    rows = [row, dict(row, flue_gas_o2=np.nan), dict(row, flue_gas_o2=0.25), row]
    out = boiler_direct(pd.DataFrame(rows), GAS_PARAMS, _context(GAS, text=WET))
    assert out["flags"].tolist() == [0, 1, 1, 0]
    assert out.loc[[1, 2], NEW_COLUMNS].isna().all().all()
    # The direct method is untouched; the second law falls back to air and fuel at T0.
    assert out["eta_1"].tolist() == pytest.approx([good["eta_1"]] * 4, rel=1e-15)
    assert out.loc[[1, 2], "exergy_supplied_w"].tolist() == pytest.approx(
        out.loc[[1, 2], "fuel_exergy_w"].tolist(), rel=1e-15
    )
    assert (298.15 * out["sgen_w_per_k"]).to_numpy() == pytest.approx(
        out["exergy_destroyed_and_lost_w"].to_numpy(), rel=1e-9
    )
    pd.testing.assert_series_equal(out.iloc[3], good, check_names=False)


def test_failed_fuel_meter_still_gives_the_indirect_efficiency(gas_case):
    row, good = gas_case
    out = _run(row, GAS_PARAMS, _context(GAS, text=WET), fuel_mass_flow=np.nan)
    assert int(out["flags"]) == Flag.INPUT_OUT_OF_RANGE
    assert np.isnan(out["eta_1"]) and np.isnan(out["direct_minus_indirect"])
    assert out["eta_1_indirect"] == pytest.approx(good["eta_1_indirect"], rel=1e-15)
    assert out[PARTS].isna().all()


@pytest.mark.parametrize(
    "fuel, drop",
    [
        (GAS, ("combustion_air_temperature",)),  # incomplete flue-gas group
        (FuelProperties("fictional gas", 52.5e6, 47.4e6), ()),  # no composition
    ],
)
def test_unusable_flue_gas_configuration_flags_every_row_and_keeps_the_direct(gas_case, fuel, drop):
    row, _ = gas_case
    row = {k: v for k, v in row.items() if k not in drop}
    out = boiler_direct(pd.DataFrame([row, row]), GAS_PARAMS, _context(fuel, text=WET))
    assert out["flags"].tolist() == [1, 1]
    assert out[NEW_COLUMNS].isna().all().all()
    assert np.isfinite(out["eta_1"]).all() and np.isfinite(out["sgen_w_per_k"]).all()


def test_unknown_o2_basis_raises_with_the_choices(gas_case):
    row, _ = gas_case
    with pytest.raises(ValueError, match="o2_basis must be one of dry, wet, got 'moist'"):
        _run(row, GAS_PARAMS, _context(GAS, text={"o2_basis": "moist"}))


def test_catalogue_declares_the_flue_gas_roles_and_o2_basis():
    assert KIND.text_parameter("o2_basis").choices == ("dry", "wet")
    assert KIND.text_parameter("o2_basis").default == "dry"
    for name in indirect.CORE_ROLES + ("air_relative_humidity", "flue_gas_co"):
        assert KIND.role(name).required is False and KIND.role(name).unit in ("1", "K")
    assert KIND.validate(list(GAS_ROW) + ["fuel_mass_flow"], GAS_PARAMS, True, WET) == []
    assert [str(p) for p in KIND.validate(["fuel_mass_flow"], {}, True, {"o2_basis": "x"})][
        -1
    ] == "parameter 'o2_basis': 'x' is not one of dry, wet"
    assert KIND.resolve_parameters({})["direct_indirect_tolerance"] == 0.02
    assert KIND.resolve_parameters({})["reference_temperature_k"] == 298.15


def test_series_index_is_kept_with_per_row_dead_state(coal_case):
    row, _ = coal_case
    index = pd.date_range("2026-01-10 00:00", periods=3, freq="min", tz="UTC")
    t0 = np.array([278.15, 288.15, 298.15])
    out = boiler_direct(
        pd.DataFrame([row] * 3, index=index),
        COAL_PARAMS,
        ModelContext(dead_state(t0, 101_325.0), COAL),
    )
    assert out.index.equals(index)
    assert (t0 * out["sgen_w_per_k"]).to_numpy() == pytest.approx(
        out[PARTS].sum(axis=1).to_numpy(), rel=1e-9
    )
    # The heat-loss method uses the reference temperature, not T0.
    assert out["eta_1_indirect"].nunique() == 1


# --- property-based: the balances close on random valid inputs ------------------------------

_FUELS = (COAL, GAS)


@settings(max_examples=50, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    row=consistent_boiler_row(),
    fuel_index=st.integers(0, 1),
    o2=st.floats(0.005, 0.09),
    basis=st.sampled_from(("dry", "wet")),
    t_air=st.floats(263.15, 323.15),
    t_fg_rise=st.floats(40.0, 250.0),
    burner_rise=st.one_of(st.none(), st.floats(0.0, 320.0)),
    eta=st.floats(0.75, 0.95),
    t0=st.floats(275.0, 313.0),  # liquid water dead states
    surface=st.floats(0.0, 0.02),
    carbon_in_ash=st.floats(0.0, 0.15),
)
def test_property_split_and_entropy_balance_close(
    row, fuel_index, o2, basis, t_air, t_fg_rise, burner_rise, eta, t0, surface, carbon_in_ash
):
    fuel = _FUELS[fuel_index]
    row = dict(
        row,
        flue_gas_o2=o2,
        flue_gas_temperature=t_air + t_fg_rise,
        combustion_air_temperature=t_air,
    )
    if burner_rise is not None:
        row["burner_air_temperature"] = t_air + burner_rise
    params = {"surface_loss_fraction": surface, "carbon_in_fly_ash": carbon_in_ash}
    context = ModelContext(dead_state(t0), fuel, text_parameters={"o2_basis": basis})
    probe = _run(dict(row, fuel_mass_flow=1.0), params, context)
    # The fuel flow for a drawn direct efficiency: the measurements need not agree.
    row["fuel_mass_flow"] = probe["heat_absorbed_w"] / (eta * fuel.hhv_j_per_kg)
    out = _run(row, params, context)
    assert int(out["flags"]) & int(Flag.INPUT_OUT_OF_RANGE) == 0, out["flags"]
    total = out["exergy_destroyed_and_lost_w"]
    scale = abs(out["exergy_supplied_w"]) + abs(out["water_exergy_gain_w"])
    assert total == pytest.approx(out["exergy_supplied_w"] - out["water_exergy_gain_w"])
    assert abs(out[PARTS].sum() - total) <= 1e-9 * scale
    assert abs(t0 * out["sgen_w_per_k"] - total) <= 1e-9 * scale
    assert out["eta_1_indirect"] + out[LOSSES].sum() - out[CREDITS].sum() == pytest.approx(
        1.0, abs=1e-13
    )
    assert out["direct_minus_indirect"] == pytest.approx(
        out["eta_1"] - out["eta_1_indirect"], abs=1e-15
    )
    disagree = abs(out["direct_minus_indirect"]) > 0.02
    assert bool(int(out["flags"]) & int(Flag.DIRECT_INDIRECT_DISAGREE)) == disagree
    # Physical parts are positive (combustion and heat transfer of a real flame).
    assert out["exergy_destroyed_combustion_w"] > 0.0
    assert out["exergy_lost_stack_chemical_w"] > 0.0


def test_measured_heating_value_moves_the_lhv_by_the_fixed_latent_heat(coal_case):
    # A calorimeter reads 25.0 MJ/kg instead of the specified 26.4: with a composition the
    # water formed (hence HHV - LHV) is fixed, so LHV = 25.0 MJ/kg - (HHV - LHV)_spec, in
    # both methods; the chemical exergy scales with the HHV (engine/units/_fuel_input.py).
    row, _ = coal_case
    out = _run(row, COAL_PARAMS, _context(COAL, COAL_T0_K), fuel_hhv=25.0e6)
    m_f = row["fuel_mass_flow"]
    lhv = 25.0e6 - (COAL.hhv_j_per_kg - COAL.lhv_j_per_kg)
    assert out["fuel_heat_input_lhv_w"] == pytest.approx(m_f * lhv, rel=1e-12)
    assert out["eta_1_lhv"] / out["eta_1"] == pytest.approx(25.0e6 / lhv, rel=1e-12)
    assert out["eta_1_indirect_lhv"] / out["eta_1_indirect"] == pytest.approx(
        25.0e6 / lhv, rel=1e-12
    )
    assert out["fuel_exergy_w"] == pytest.approx(
        m_f * COAL.chemical_exergy_j_per_kg * 25.0 / 26.4, rel=1e-12
    )
    reference = heatloss.heat_loss_efficiency(
        COAL,
        row["flue_gas_o2"],
        row["flue_gas_temperature"],
        row["combustion_air_temperature"],
        humidity_ratio=combustion.humidity_ratio_from_relative_humidity(0.60, 301.15, 101_325.0),
        fuel_temperature_k=308.15,
        co_ppm=120.0,
        unburned_carbon_kg_per_kg=_coal_unburned_carbon(),
        surface_loss_fraction=0.004,
        fuel_hhv_j_per_kg=25.0e6,
    ).iloc[0]
    assert out["eta_1_indirect"] == pytest.approx(reference["eta_1_indirect"], rel=1e-12)
    assert out[PARTS].sum() == pytest.approx(out["exergy_destroyed_and_lost_w"], rel=1e-9)
